"""Independent arc-length references computed with mpmath at 30+ digits.

These share no code with pathlen: curves are evaluated from their textbook
definitions (Bernstein form, homogeneous coordinates for rational curves) and
integrated with mpmath's tanh-sinh quadrature, split at the speed minima found
by sampling and golden-section search in extended precision.
"""

from __future__ import annotations

from collections.abc import Sequence

import mpmath as mp


def bezier_length(ctrl: Sequence[Sequence[float]], weights: Sequence[float] | None = None,
                  samples: int = 48) -> mp.mpf:
    """Arc length of a (rational) Bézier curve on [0, 1]."""
    mp.mp.dps = 28
    pts = [[mp.mpf(float(x)) for x in p] + [mp.mpf(0)] * (3 - len(p)) for p in ctrl]
    d = len(pts) - 1
    w = [mp.mpf(1)] * (d + 1) if weights is None else [mp.mpf(float(x)) for x in weights]
    hom = [[wi * x for x in p] + [wi] for p, wi in zip(pts, w, strict=True)]
    dhom = [[d * (b - a) for a, b in zip(hom[i], hom[i + 1], strict=True)] for i in range(d)]

    def bern(cp: list[list[mp.mpf]], t: mp.mpf) -> list[mp.mpf]:
        k = len(cp) - 1
        basis = [mp.binomial(k, i) * t**i * (1 - t) ** (k - i) for i in range(k + 1)]
        return [mp.fsum(b * p[j] for b, p in zip(basis, cp, strict=True)) for j in range(4)]

    def speed(t: mp.mpf) -> mp.mpf:
        h, hd = bern(hom, t), bern(dhom, t)
        return mp.sqrt(mp.fsum((hd[k] * h[3] - h[k] * hd[3]) ** 2 for k in range(3))) / h[3] ** 2

    return _integrate_split(speed, mp.mpf(0), mp.mpf(1), samples)


def ellipse_arc_length(u: Sequence[float], v: Sequence[float], t0: float, t1: float) -> mp.mpf:
    """Length of c + u cos t + v sin t on [t0, t1] by direct quadrature of the speed."""
    mp.mp.dps = 28
    uu = [mp.mpf(float(x)) for x in u]
    vv = [mp.mpf(float(x)) for x in v]

    def speed(t: mp.mpf) -> mp.mpf:
        s, c = mp.sin(t), mp.cos(t)
        return mp.sqrt(mp.fsum((-a * s + b * c) ** 2 for a, b in zip(uu, vv, strict=True)))

    return _integrate_split(speed, mp.mpf(float(t0)), mp.mpf(float(t1)), 60)


def _integrate_split(speed, a: mp.mpf, b: mp.mpf, samples: int) -> mp.mpf:
    ts = [a + (b - a) * i / samples for i in range(samples + 1)]
    sp = [speed(t) for t in ts]
    cuts = [a]
    g = (mp.sqrt(5) - 1) / 2
    for i in range(1, samples):
        if sp[i] <= sp[i - 1] and sp[i] <= sp[i + 1]:
            lo, hi = ts[i - 1], ts[i + 1]
            for _ in range(90):
                x1, x2 = hi - g * (hi - lo), lo + g * (hi - lo)
                if speed(x1) < speed(x2):
                    hi = x2
                else:
                    lo = x1
            cuts.append((lo + hi) / 2)
    cuts.append(b)
    return mp.quad(speed, cuts)
