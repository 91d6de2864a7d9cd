"""Benchmark: pathlen's vectorised integrator against per-segment alternatives, in one run.

    python bench/measure_bench.py [--count 100000] [--sample 40] [--dxf-entities 100000]

Prints throughput for the same random cubic Béziers measured by
1. pathlen (``bezier_lengths``, all segments at once; median of five calls, on one thread
   and on as many as it uses by default),
2. svgpathtools ``CubicBezier.length()`` one segment at a time,
3. ``scipy.integrate.quad`` on the speed, one segment at a time,
with each method's largest relative error against mpmath on a sample; then the
wall time of ``ezdxf.readfile`` alone against pathlen's whole file measurement
(read, measure, contours) on a generated DXF.
"""

from __future__ import annotations

import argparse
import math
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from pathlen.batch import measure_file, single_blas_thread
from pathlen.geometry import Beziers
from pathlen.measure import planar_cubic
from pathlen.measure.bezier import bezier_lengths
from tests.reference import bezier_length


def random_cubics(n: int, seed: int = 1) -> np.ndarray:
    rng = np.random.default_rng(seed)
    ctrl = np.zeros((n, 4, 3))
    ctrl[:, :, :2] = rng.uniform(0, 100, size=(n, 4, 2))
    return ctrl


def run_pathlen(ctrl: np.ndarray, rtol: float, threads: int, repeats: int = 5) -> tuple[np.ndarray, float]:
    """Median wall time of ``repeats`` calls (this machine's timings scatter by tens of percent)."""
    batch = Beziers(ctrl, np.ones(ctrl.shape[:2]), np.arange(len(ctrl)))
    saved, planar_cubic.THREADS = planar_cubic.THREADS, threads
    try:
        times = []
        for _ in range(repeats):
            t = time.perf_counter()
            length, _, _ = bezier_lengths(batch, rtol)
            times.append(time.perf_counter() - t)
    finally:
        planar_cubic.THREADS = saved
    return length, float(np.median(times))


def run_svgpathtools(ctrl: np.ndarray) -> tuple[np.ndarray, float]:
    from svgpathtools import CubicBezier

    segs = [CubicBezier(*(complex(x, y) for x, y in c[:, :2])) for c in ctrl]
    t = time.perf_counter()
    out = np.array([s.length() for s in segs])
    return out, time.perf_counter() - t


def run_quad(ctrl: np.ndarray) -> tuple[np.ndarray, float]:
    from scipy.integrate import quad

    t = time.perf_counter()
    out = np.empty(len(ctrl))
    for i, c in enumerate(ctrl):
        d0, d1, d2 = 3 * (c[1] - c[0]), 3 * (c[2] - c[1]), 3 * (c[3] - c[2])

        def speed(s: float, d0=d0, d1=d1, d2=d2) -> float:
            v = (1 - s) ** 2 * d0 + 2 * s * (1 - s) * d1 + s * s * d2
            return math.hypot(v[0], v[1])

        out[i] = quad(speed, 0.0, 1.0, epsabs=0.0, epsrel=1e-10, limit=200)[0]
    return out, time.perf_counter() - t


def write_big_dxf(path: Path, entities: int) -> None:
    import ezdxf

    rng = np.random.default_rng(3)
    doc = ezdxf.new("R2010", setup=False)
    doc.header["$INSUNITS"] = 4
    msp = doc.modelspace()
    per = entities // 5
    for x, y in rng.uniform(0, 1000, size=(per, 2)):
        msp.add_line((x, y), (x + 5, y + 3))
        msp.add_circle((x, y), 2.5)
        msp.add_arc((x, y), 4.0, 10, 200)
        msp.add_lwpolyline([(x, y, 0.3), (x + 4, y, 0), (x + 4, y + 4, 0)], format="xyb", close=True)
        msp.add_open_spline([(x, y), (x + 1, y + 3), (x + 3, y - 1), (x + 5, y + 2)], degree=3)
    doc.saveas(path)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--count", type=int, default=100_000)
    ap.add_argument("--sample", type=int, default=40)
    ap.add_argument("--dxf-entities", type=int, default=100_000)
    ap.add_argument("--rtol", type=float, default=1e-9)
    args = ap.parse_args()
    single_blas_thread()  # as the command line does

    ctrl = random_cubics(args.count)
    ref_idx = np.linspace(0, args.count - 1, args.sample).astype(int)
    refs = np.array([float(bezier_length(ctrl[i])) for i in ref_idx])

    rows = []
    threads = planar_cubic.THREADS
    for name, fn in [("pathlen, 1 thread", lambda: run_pathlen(ctrl, args.rtol, 1)),
                     (f"pathlen, {threads} threads", lambda: run_pathlen(ctrl, args.rtol, threads)),
                     ("svgpathtools per segment", lambda: run_svgpathtools(ctrl)),
                     ("scipy quad per segment", lambda: run_quad(ctrl))]:
        out, secs = fn()
        err = np.max(np.abs(out[ref_idx] - refs) / refs)
        rows.append((name, secs, args.count / secs, err, out.sum()))
    base = rows[2][2]
    print(f"{args.count} random cubic Béziers, rtol {args.rtol:g}; error vs mpmath on {args.sample} of them")
    print(f"{'method':30s} {'seconds':>9s} {'segments/s':>12s} {'vs svgpathtools':>16s} {'max rel err':>12s}"
          f" {'total length (mm)':>20s}")
    for name, secs, rate, err, total in rows:
        print(f"{name:30s} {secs:9.3f} {rate:12,.0f} {rate / base:15.1f}x {err:12.2e} {total:20.6f}")

    with tempfile.TemporaryDirectory() as tmp:
        import ezdxf

        path = Path(tmp) / "big.dxf"
        write_big_dxf(path, args.dxf_entities)
        t = time.perf_counter()
        ezdxf.readfile(path)
        t_read = time.perf_counter() - t
        t = time.perf_counter()
        result = measure_file(str(path))
        t_all = time.perf_counter() - t
    print(f"\nDXF with {args.dxf_entities} entities: ezdxf.readfile {t_read:.2f} s; "
          f"pathlen read+measure+contours {t_all:.2f} s ({t_all / t_read:.2f}x); "
          f"total {result.length_mm:,.3f} mm ± {result.bound_mm:.1e} mm")


if __name__ == "__main__":
    main()
