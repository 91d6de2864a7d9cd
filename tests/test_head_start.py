"""The batch's first worker forked as the program starts (pathlen.head_start): taken by the batch, which
gets the same answers; work it cannot be sent falls back to a worker forked then; an untaken worker
ends with the program, whichever way the program ends."""

import subprocess
import sys
import textwrap
import time
from pathlib import Path

from pathlen.head_start import DRAWING_SUFFIXES, reader_kinds
from pathlen.importers import SUFFIXES

FIXTURES = Path(__file__).resolve().parent.parent / "fixtures"


def _script(tmp_path: Path, body: str) -> str:
    path = tmp_path / "probe.py"
    path.write_text(textwrap.dedent(body))
    out = subprocess.run([sys.executable, str(path), str(FIXTURES / "kl101_bracket.dxf")], capture_output=True,
                         text=True, timeout=60)
    assert out.returncode == 0, out.stderr
    return out.stdout


def _ended(pid: int, within_s: float = 20.0) -> bool:
    """Whether process ``pid`` is gone (or a zombie no one has reaped yet) within ``within_s``."""
    stop = time.monotonic() + within_s
    while time.monotonic() < stop:
        try:
            state = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()[0]
        except (FileNotFoundError, ProcessLookupError):
            return True
        if state in ("Z", "X"):
            return True
        time.sleep(0.05)
    return False


def test_suffixes_match_the_readers():
    assert DRAWING_SUFFIXES == SUFFIXES


def test_reader_kinds_follow_the_files_given(tmp_path):
    assert reader_kinds(["a.DXF", "--jobs", "2"]) == (".dxf",)
    assert reader_kinds(["b.svg", "a.dxf", "--format", "json"]) == (".dxf", ".svg")
    assert reader_kinds([str(tmp_path)]) == (".dxf", ".svg")  # a folder: every reader
    assert reader_kinds(["a.dxf", "--help"]) == ()
    assert reader_kinds(["a.dxf", "-h"]) == ()
    assert reader_kinds(["a.dxf", "--scheduler", "tcp://host:8786"]) == ()
    assert reader_kinds(["a.dxf", "--scheduler=tcp://host:8786"]) == ()
    assert reader_kinds(["--profile", "steel-3mm-laser"]) == ()  # no drawing: no worker


def test_the_batch_takes_the_worker_started_before_numpy(tmp_path):
    out = _script(tmp_path, """
        import os, sys

        def whose(path, settings):  # defined before the fork: the worker has it too
            return os.getpid()

        from pathlen import head_start
        head_start.start(sys.argv[1:])
        early = head_start._waiting[0][0].pid
        print("numpy" in sys.modules)  # forked before numpy loaded here
        from pathlen.batch import FileResult, MeasureSettings, measure_file, run_batch
        print([pid == early for _, pid in run_batch(sys.argv[1:], MeasureSettings(), work=whose)])
        print(head_start.take() is None)  # taken once
        from pathlen.batch import run_batch
        plain = measure_file(sys.argv[1])
        head_start.start(sys.argv[1:])
        (_, adopted), = run_batch(sys.argv[1:], MeasureSettings())
        print(adopted == plain, adopted.ok, adopted.length_mm > 0)
    """)
    assert out.split() == ["False", "[True]", "True", "True", "True", "True"]


def test_work_that_cannot_be_sent_runs_on_a_worker_forked_then(tmp_path):
    out = _script(tmp_path, """
        import os, sys
        from pathlen import head_start
        head_start.start(sys.argv[1:])
        early = head_start._waiting[0][0]
        from pathlen.batch import MeasureSettings, run_batch
        got = list(run_batch(sys.argv[1:], MeasureSettings(), work=lambda path, settings: os.getpid()))
        early.join(20)
        print(len(got), got[0][1] != early.pid, early.exitcode is not None)
    """)
    assert out.split() == ["1", "True", "True"]


def test_an_untaken_worker_ends_with_the_program(tmp_path):
    # the interpreter's usual end (a daemon process is terminated, then joined: it must not ignore SIGTERM
    # yet) and the program's quick end (os._exit: the worker is killed by the kernel or sees its parent gone)
    for end in ("sys.exit(0)", "os._exit(0)"):
        started = time.monotonic()
        out = _script(tmp_path, f"""
            import os, sys, time
            from pathlen import head_start
            head_start.start(sys.argv[1:])
            pid = head_start._waiting[0][0].pid
            print(pid, flush=True)

            def ignored() -> int:  # the signals the worker ignores (proc(5): SigIgn, a hex mask)
                with open(f"/proc/{{pid}}/status") as status:
                    return next(int(line.split()[1], 16) for line in status if line.startswith("SigIgn:"))

            while not ignored() & (1 << 1):  # SIGINT (2) ignored: the worker's own code runs
                time.sleep(0.01)
            time.sleep(0.5)
            {end}
        """)
        assert time.monotonic() - started < 60
        assert _ended(int(out.split()[0])), end


def test_the_program_forks_before_click_and_numpy_and_loads_no_numpy_for_measure(tmp_path):
    # as the README says: the worker is forked before click and numpy load, it is the one the batch uses,
    # and the program's own process never loads numpy for `measure`; the JSON is the in-process command's
    import json

    from click.testing import CliRunner

    from pathlen.cli import main

    script = tmp_path / "program.py"
    script.write_text(textwrap.dedent("""
        import os, sys
        from pathlen import head_start
        seen = []
        real_start, real_exit = head_start.start, os._exit

        def start(args):
            seen.extend(["click" in sys.modules, "numpy" in sys.modules])
            real_start(args)
            seen.append(len(head_start._waiting))

        def end(status):
            seen.extend([len(head_start._waiting), "numpy" in sys.modules])
            print(*seen, file=sys.stderr, flush=True)
            real_exit(status)

        head_start.start, os._exit = start, end
        sys.argv = ["pathlen", "measure", "--format", "json", sys.argv[1]]
        from pathlen.program import run
        run()
    """))
    drawing = str(FIXTURES / "kl101_bracket.dxf")
    out = subprocess.run([sys.executable, str(script), drawing], capture_output=True, text=True, timeout=120)
    assert out.returncode == 0, out.stderr
    # click and numpy not loaded at the fork; one worker waiting; taken by the end; numpy never loaded here
    assert out.stderr.split()[-5:] == ["False", "False", "1", "0", "False"]
    here = CliRunner().invoke(main, ["measure", "--format", "json", drawing])
    assert json.loads(out.stdout) == json.loads(here.stdout)
