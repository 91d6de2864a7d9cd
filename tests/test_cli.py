"""The measure command as a user runs it (click's CliRunner)."""

import csv
import io
import json
import math
from pathlib import Path

import ezdxf
import pytest

from pathlen.cli import main

FIXTURES = Path(__file__).resolve().parent.parent / "fixtures"


@pytest.fixture
def square(tmp_path):
    doc = ezdxf.new("R2010", setup=False)
    doc.header["$INSUNITS"] = 1  # inches
    doc.layers.add("CUT")
    doc.modelspace().add_lwpolyline([(0, 0), (2, 0), (2, 2), (0, 2)], close=True, dxfattribs={"layer": "CUT"})
    doc.modelspace().add_circle((1, 1), 0.5, dxfattribs={"layer": "CUT"})
    path = tmp_path / "square.dxf"
    doc.saveas(path)
    return path


def expected_square_mm():
    return (8 + math.pi) * 25.4  # perimeter 8 in + circle 2·pi·0.5 in; 1 in = 25.4 mm exactly


def test_json_contract(runner, square):
    res = runner.invoke(main, ["measure", str(square), "--format", "json"])
    assert res.exit_code == 0, res.output
    doc = json.loads(res.stdout)
    assert doc["format"] == "pathlen-measure" and doc["version"] == 1 and doc["units"] == "mm"
    f = doc["files"][0]
    assert f["ok"] is True and f["error"] is None
    assert f["length"] == pytest.approx(expected_square_mm(), rel=1e-14)
    assert f["layers"]["CUT"]["count"] == 2
    assert f["contours"] == {"closed": 2, "open": 0}
    assert doc["total"] == {"length": f["length"], "error_bound": f["error_bound"], "files": 1, "failed": 0}
    assert 0 < f["error_bound"] < 1e-9 * f["length"]


def test_inches_output(runner, square):
    res = runner.invoke(main, ["measure", str(square), "--format", "json", "--units", "in"])
    assert json.loads(res.stdout)["files"][0]["length"] == pytest.approx(8 + math.pi, rel=1e-14)


def test_csv_rows(runner, square, tmp_path):
    out = tmp_path / "report.csv"
    res = runner.invoke(main, ["measure", str(square), "--format", "csv", "--output", str(out), "--units", "in"])
    assert res.exit_code == 0
    rows = list(csv.reader(io.StringIO(out.read_text())))
    assert rows[0] == ["path", "layer", "length_in", "error_bound_in", "count", "ok", "error"]
    assert rows[1][1] == "CUT" and float(rows[1][2]) == pytest.approx(8 + math.pi, rel=1e-14)


def test_csv_has_a_row_for_a_failed_file(runner, square, tmp_path):
    bad = tmp_path / "broken.dxf"
    bad.write_bytes(b"\x00garbage\xff")
    res = runner.invoke(main, ["measure", str(bad), str(square), "--format", "csv"])
    assert res.exit_code == 1
    rows = list(csv.DictReader(io.StringIO(res.stdout)))
    failed = [r for r in rows if r["path"] == str(bad)]
    assert len(failed) == 1 and failed[0]["ok"] == "false" and failed[0]["error"]
    assert failed[0]["length_mm"] == ""


MARKUP = "part [v2] [bold]"


@pytest.mark.parametrize("fmt", ["table", "json", "csv"])
def test_text_from_drawings_is_never_console_markup(runner, tmp_path, fmt):
    # A file name, layer name and error text holding rich markup: printed as the characters they are
    import ezdxf

    folder = tmp_path / MARKUP
    folder.mkdir()
    good = folder / f"{MARKUP}.svg"
    good.write_text('<svg xmlns="http://www.w3.org/2000/svg" width="10mm" height="10mm" viewBox="0 0 10 10">'
                    '<g id="CUT [/x]"><line x2="10"/></g></svg>')
    doc = ezdxf.new()
    doc.blocks.new("B [bold]").add_blockref("B [bold]", (0, 0))  # a block cycle: its error names the block
    doc.modelspace().add_blockref("B [bold]", (0, 0))
    bad = folder / f"bad {MARKUP}.dxf"
    doc.saveas(bad)
    res = runner.invoke(main, ["measure", str(good), str(bad), "--format", fmt])
    assert res.exit_code == 1, res.output
    assert isinstance(res.exception, SystemExit)
    assert f"bad {MARKUP}.dxf: block cycle: 'B [bold]' inserts 'B [bold]'" in " ".join(res.stderr.split())
    if fmt == "table":
        flat = "".join(res.stdout.split())
        assert "CUT[/x]" in flat and "[v2]" in flat


def test_output_into_a_missing_folder_is_a_usage_error(runner, square, tmp_path):
    res = runner.invoke(main, ["measure", str(square), "-o", str(tmp_path / "nowhere" / "r.json")])
    assert res.exit_code == 2 and "does not exist" in res.output


@pytest.mark.parametrize("option", [["--svg-dpi", "inf"], ["--join-tol", "nan"], ["--timeout", "inf"]])
def test_non_finite_options_are_usage_errors(runner, square, option):
    res = runner.invoke(main, ["measure", str(square), *option])
    assert res.exit_code == 2


def test_strict_fails_a_file_with_warnings(runner, tmp_path):
    import ezdxf

    doc = ezdxf.new()  # no $INSUNITS: a warning
    doc.header["$INSUNITS"] = 0
    doc.modelspace().add_line((0, 0), (10, 0))
    path = tmp_path / "unitless.dxf"
    doc.saveas(path)
    assert runner.invoke(main, ["measure", str(path)]).exit_code == 0
    res = runner.invoke(main, ["measure", str(path), "--strict", "--format", "json"])
    assert res.exit_code == 1
    entry = json.loads(res.stdout)["files"][0]
    assert entry["ok"] is False
    assert entry["error"].startswith("warning taken as an error (--strict): drawing has no units")


def test_mixed_batch_reports_bad_file_and_goes_on(runner, square, tmp_path):
    bad = tmp_path / "broken.dxf"
    bad.write_bytes(b"\x00garbage\xff")
    res = runner.invoke(main, ["measure", str(bad), str(square), "--format", "json"])
    assert res.exit_code == 1
    doc = json.loads(res.stdout)
    files = {Path(f["path"]).name: f for f in doc["files"]}
    assert files["broken.dxf"]["ok"] is False and files["broken.dxf"]["length"] == 0
    assert "\n" not in files["broken.dxf"]["error"]
    assert files["square.dxf"]["ok"] is True
    assert doc["total"]["failed"] == 1
    assert "Traceback" not in res.output and "broken.dxf" in res.stderr


def test_table_shows_units_and_total(runner, square):
    res = runner.invoke(main, ["measure", str(square)])
    assert res.exit_code == 0
    assert "Length (mm)" in res.stdout and "Total" in res.stdout
    assert f"{expected_square_mm():,.3f}" in res.stdout


def test_folder_and_jobs(runner):
    one = runner.invoke(main, ["measure", str(FIXTURES), "--format", "json"])
    two = runner.invoke(main, ["measure", str(FIXTURES), "--format", "json", "--jobs", "2"])
    assert one.exit_code == two.exit_code == 0
    a, b = json.loads(one.stdout), json.loads(two.stdout)
    assert [f["path"] for f in a["files"]] == [f["path"] for f in b["files"]]
    assert a["total"]["length"] == b["total"]["length"] and a["total"]["files"] >= 3


@pytest.mark.parametrize("args", [
    ["measure"], ["measure", "x.dxf", "--rtol", "2"], ["measure", "x.dxf", "--units", "ft"],
    ["measure", "x.dxf", "--format", "xml"],
])
def test_usage_errors_exit_2(runner, args):
    res = runner.invoke(main, args)
    assert res.exit_code == 2
    assert "Traceback" not in res.output


def test_empty_folder_is_a_usage_error(runner, tmp_path):
    res = runner.invoke(main, ["measure", str(tmp_path)])
    assert res.exit_code == 2 and "no .dxf or .svg files" in res.output


def test_other_file_types_fail_alone(runner, square, tmp_path):
    other = tmp_path / "notes.txt"
    other.write_text("a note")
    res = runner.invoke(main, ["measure", str(other), str(square), "--format", "json"])
    assert res.exit_code == 1
    files = json.loads(res.stdout)["files"]
    assert files[0]["error"] == "unsupported file type '.txt': expected .dxf or .svg"
    assert files[1]["ok"] is True


def test_demo_svg_lamp_panel(runner):
    # fixtures/kl412_lamp_panel.svg: 180 mm wide showing 360 user units (0.5 mm each).  Expected CUT
    # length from classical results: rounded rectangle = straight sides + one ellipse of semi-axes
    # (24, 16); two circles r = 9; an ellipse (70, 40), rotated; two slots from a symbol scaled x2,
    # each 2 * (10 + 10) straight + two semicircles of r = 10. Ellipse perimeters: 4 a E(1 - b²/a²)
    # with mpmath.ellipe (complete elliptic integral of the second kind).
    import mpmath as mp

    def perimeter(a, b):
        return 4 * a * float(mp.ellipe(1 - (b / a) ** 2))

    res = runner.invoke(main, ["measure", str(FIXTURES / "kl412_lamp_panel.svg"), "--format", "json"])
    assert res.exit_code == 0, res.output
    f = json.loads(res.stdout)["files"][0]
    cut_units = (2 * (340 - 48) + 2 * (220 - 32) + perimeter(24, 16) + 2 * 2 * math.pi * 9 + perimeter(70, 40)
                 + 2 * (2 * 20 + 2 * math.pi * 10))
    assert f["layers"]["CUT"]["length"] == pytest.approx(cut_units / 2, rel=1e-12)
    assert f["colors"]["#ff0000"]["length"] == pytest.approx(f["layers"]["CUT"]["length"], rel=1e-15)
    assert f["colors"]["#0000ff"]["count"] == 3
    assert f["contours"] == {"closed": 6, "open": 3}
    assert f["warnings"] == ["1 <text> element not measured"]


def test_mixed_dxf_and_svg_batch(runner, square, tmp_path):
    svg = tmp_path / "ring.svg"
    svg.write_text('<svg xmlns="http://www.w3.org/2000/svg" width="2in" height="2in" viewBox="0 0 2 2">'
                   '<circle cx="1" cy="1" r="0.5"/></svg>')
    bad = tmp_path / "broken.svg"
    bad.write_text("<svg")
    res = runner.invoke(main, ["measure", str(tmp_path), "--format", "json", "--units", "in"])
    assert res.exit_code == 1
    files = {Path(f["path"]).name: f for f in json.loads(res.stdout)["files"]}
    assert files["broken.svg"]["ok"] is False
    assert files["ring.svg"]["length"] == pytest.approx(math.pi, rel=1e-14)  # circle 2πr, r = 0.5 in
    assert files["square.dxf"]["length"] == pytest.approx(8 + math.pi, rel=1e-14)
    assert files["square.dxf"]["colors"] == {}


def test_svg_dpi_option(runner, tmp_path):
    svg = tmp_path / "px.svg"
    svg.write_text('<svg xmlns="http://www.w3.org/2000/svg" width="300" height="300"><line x2="90"/></svg>')
    res = runner.invoke(main, ["measure", str(svg), "--format", "json", "--svg-dpi", "90"])
    f = json.loads(res.stdout)["files"][0]
    assert f["length"] == pytest.approx(25.4, rel=1e-14) and f["warnings"] == []  # 90 px at 90 px/in = 1 in
    res = runner.invoke(main, ["measure", str(svg), "--svg-dpi", "0"])
    assert res.exit_code == 2


def test_table_shows_stroke_colours(runner, tmp_path):
    report = tmp_path / "report.txt"
    res = runner.invoke(main, ["measure", str(FIXTURES / "kl412_lamp_panel.svg"), "-o", str(report)])
    assert res.exit_code == 0
    text = report.read_text()
    assert "stroke #ff0000" in text and "stroke #0000ff" in text and "Length (mm)" in text


def test_the_group_lists_every_command_with_its_own_summary():
    # the summaries `pathlen --help` shows without importing the commands are the commands' own
    import importlib

    from pathlen.cli import COMMANDS

    for name, (module, summary) in COMMANDS.items():
        command = getattr(importlib.import_module(module), name)
        assert command.get_short_help_str(limit=45) == summary, name


def test_program_ends_at_once_after_a_batch_with_the_same_output_and_status(tmp_path, runner):
    # the pathlen program skips the interpreter's teardown after measure, cut, seam and bead: the report,
    # the warnings and the exit status (1: a file failed) are those of ``python -m pathlen``, which
    # ends the usual way, and of the same command in process; other commands end the usual way
    import json
    import subprocess
    import sys
    from pathlib import Path

    from pathlen.cli import main
    from pathlen.program import QUICK_EXIT

    bad = tmp_path / "broken.dxf"
    bad.write_text("0\nSECTION\n2\nENTITIES\n0\nLINE\n")
    args = ["measure", "--format", "json", str(FIXTURES / "kl101_bracket.dxf"), str(bad)]
    program = Path(sys.executable).parent / "pathlen"
    quick = subprocess.run([str(program), *args], capture_output=True, text=True, timeout=120)
    usual = subprocess.run([sys.executable, "-m", "pathlen", *args], capture_output=True, text=True, timeout=120)
    here = runner.invoke(main, args)
    assert quick.returncode == usual.returncode == here.exit_code == 1
    assert json.loads(quick.stdout) == json.loads(usual.stdout) == json.loads(here.stdout)
    assert quick.stderr == usual.stderr
    listed = subprocess.run([str(program), "profiles"], capture_output=True, text=True, timeout=120)
    assert listed.returncode == 0 and "profiles" not in QUICK_EXIT and listed.stdout.strip()
    assert QUICK_EXIT == {"measure", "cut", "seam", "bead"}


def test_help_starts_without_numpy():
    import subprocess
    import sys

    code = "import sys; from pathlen.cli import main; sys.argv = ['pathlen', '--help']\n" \
           "try:\n    main()\nexcept SystemExit:\n    pass\nprint('numpy' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip().splitlines()[-1] == "False"


def test_measure_command_loads_rich_and_readers_only_when_it_runs():
    # the command's module and the batch load no rich (the report loads it while the workers start)
    # and no reader; load_readers takes the readers of the kinds asked for, and only those
    import subprocess
    import sys

    code = ("import sys; import pathlen.cli.measure, pathlen.batch\n"
            "print(any(m == 'rich' or m.startswith('rich.') for m in sys.modules),"
            " 'pathlen.importers.dxf' in sys.modules, 'pathlen.importers.svg' in sys.modules)\n"
            "from pathlen.importers import load_readers; load_readers(['.svg', '.txt'])\n"
            "print('pathlen.importers.dxf' in sys.modules, 'pathlen.importers.svg' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.split() == ["False", "False", "False", "False", "True"]


def test_command_line_keeps_blas_to_one_thread_without_threadpoolctl():
    # the command line sets the BLAS thread variables before numpy loads (OpenBLAS reads
    # OPENBLAS_NUM_THREADS as it is loaded: OpenBLAS's README); a worker's set-up and a DXF's reading
    # then import neither threadpoolctl nor hashlib (OpenSSL), and threadpoolctl, asked afterwards,
    # finds every BLAS library at one thread
    import subprocess
    import sys

    code = ("import os, sys\n"
            "for v in ('OPENBLAS_NUM_THREADS', 'MKL_NUM_THREADS', 'BLIS_NUM_THREADS'): os.environ.pop(v, None)\n"
            "import pathlen.cli.measure\n"
            "from pathlen.batch import measure_file, single_blas_thread\n"
            "single_blas_thread(); result = measure_file(sys.argv[1])\n"
            "print(result.ok, 'threadpoolctl' in sys.modules, 'hashlib' in sys.modules)\n"
            "from threadpoolctl import threadpool_info\n"
            "print(sorted({i['num_threads'] for i in threadpool_info() if i['user_api'] == 'blas'}))")
    out = subprocess.run([sys.executable, "-c", code, str(FIXTURES / "kl101_bracket.dxf")], capture_output=True,
                         text=True, check=True).stdout
    assert out.splitlines() == ["True False False", "[1]"]


def test_tables_keep_numbers_whole_at_80_columns():
    # a long file name folds; every number stays on one line
    import io

    from rich.console import Console

    from pathlen.export import report_table

    table = report_table("t", [("File", "left"), ("Length (mm)", "right"), ("Error bound (mm)", "right")])
    table.add_row("/very/long/folder/name/that/goes/on/and/on/" * 3 + "part.dxf", "123,456,789.123", "± 1.2e-09")
    buf = io.StringIO()
    Console(file=buf, width=80, color_system=None).print(table)
    text = buf.getvalue()
    assert "123,456,789.123" in text and "± 1.2e-09" in text
    assert max(len(line) for line in text.splitlines()) <= 80
