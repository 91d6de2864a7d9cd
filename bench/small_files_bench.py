"""Small files, measured the way a user meets them: start-up and batch throughput, fresh processes.

1. Start-up: ``pathlen measure`` on one 40-line DXF, ``pathlen --help``, against ``python -c pass`` and
   ``python -c "import ezdxf"`` (the library a plain script would read the file with), best of 7.
2. Throughput: 2,000 DXF files of 40 entities (lines, circles, arcs, a bulged polyline) through
   ``pathlen measure --format json`` with ``--jobs 1`` and ``--jobs 2``, against one Python process
   reading every file with ``ezdxf.readfile`` (reading only, no lengths), best of 3.

Both with and without compiled bytecode for pathlen (``PYTHONDONTWRITEBYTECODE=1`` and an editable
install leave none: every start then compiles pathlen's modules; a regular ``pip install .`` writes them).

Run: python bench/small_files_bench.py [--files N]
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import ezdxf

PATHLEN = str(Path(sys.executable).parent / "pathlen")
PACKAGE = Path(__file__).parent.parent / "pathlen"


def wall(cmd: list[str], runs: int) -> float:
    """Best wall time (s) of ``runs`` fresh processes of ``cmd``."""
    best = float("inf")
    for _ in range(runs):
        t = time.perf_counter()
        subprocess.run(cmd, check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        best = min(best, time.perf_counter() - t)
    return best


def write_drawings(folder: Path, count: int) -> list[Path]:
    """``count`` files of 40 entities each: 20 distinct drawings (a fictional workshop's brackets), copied."""
    folder.mkdir()
    distinct = []
    for k in range(20):
        doc = ezdxf.new("R2010", units=4)
        msp = doc.modelspace()
        for j in range(34):
            msp.add_line((j, k), (j + 5, k + 10))
        msp.add_circle((50, 50), 3 + k)
        msp.add_circle((80, 50), 2)
        msp.add_arc((20, 60), 8, 0, 120 + k)
        msp.add_arc((40, 60), 8, 30, 300)
        msp.add_lwpolyline([(0, 0, 0.3), (40, 0, 0), (40, 20, -0.5), (0, 20, 0)], format="xyb", close=True)
        msp.add_line((0, 0), (k, 1))
        path = folder / f"bracket_{k:02d}.dxf"
        doc.saveas(path)
        distinct.append(path)
    files = []
    for n in range(count):
        target = folder / f"order_{n:05d}.dxf"
        shutil.copy(distinct[n % len(distinct)], target)
        files.append(target)
    for path in distinct:
        path.unlink()
    return files


def startup(tiny: Path) -> None:
    rows = [("python -c pass", [sys.executable, "-c", "pass"]),
            ("python -c 'import ezdxf'", [sys.executable, "-c", "import ezdxf"]),
            ("pathlen --help", [PATHLEN, "--help"]),
            ("pathlen measure tiny.dxf", [PATHLEN, "measure", str(tiny)])]
    times = {name: wall(cmd, 7) for name, cmd in rows}
    ezdxf_s = times["python -c 'import ezdxf'"]
    for name, seconds in times.items():
        print(f"  {name:28s} {seconds:6.3f} s  {seconds / ezdxf_s:5.2f}x import ezdxf")


def throughput(folder: Path, count: int) -> None:
    reader = ("import ezdxf, pathlib, sys\n"
              "for p in sorted(pathlib.Path(sys.argv[1]).glob('*.dxf')):\n    ezdxf.readfile(p)\n")
    rows = [("ezdxf.readfile, one process", [sys.executable, "-c", reader, str(folder)]),
            ("pathlen measure --jobs 1", [PATHLEN, "measure", "--format", "json", "--jobs", "1", str(folder)]),
            ("pathlen measure --jobs 2", [PATHLEN, "measure", "--format", "json", "--jobs", "2", str(folder)])]
    rates = {}
    for name, cmd in rows:
        seconds = wall(cmd, 3)
        rates[name] = count / seconds
        print(f"  {name:28s} {seconds:6.2f} s  {count / seconds:7.0f} files/s")
    gain = rates["pathlen measure --jobs 2"] / rates["pathlen measure --jobs 1"]
    print(f"  --jobs 2 gives {gain:.2f}x --jobs 1")


def main() -> None:
    count = int(sys.argv[sys.argv.index("--files") + 1]) if "--files" in sys.argv else 2000
    print(f"{os.cpu_count()} cores; Python {sys.version.split()[0]}; ezdxf {ezdxf.__version__}")
    with tempfile.TemporaryDirectory() as tmp:
        files = write_drawings(Path(tmp) / "orders", count)
        for compiled in (False, True):
            cache = [p for p in PACKAGE.rglob("__pycache__")]
            for folder in cache:
                shutil.rmtree(folder)
            if compiled:
                subprocess.run([sys.executable, "-m", "compileall", "-q", str(PACKAGE)], check=True)
            env_note = "with compiled bytecode" if compiled else "without compiled bytecode (compiled on every start)"
            os.environ["PYTHONDONTWRITEBYTECODE"] = "1"  # keep the state chosen for the whole round
            print(f"\nStart-up, {env_note}; fresh processes, best of 7")
            startup(files[0])
            print(f"\n{count:,} DXF files of 40 entities, {env_note}; fresh processes, best of 3")
            throughput(Path(tmp) / "orders", count)


if __name__ == "__main__":
    main()
