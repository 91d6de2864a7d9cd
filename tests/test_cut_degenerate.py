"""Cut estimates on degenerate sheets: thin slits, fine segments, stacks, shared corners."""

import json
import math

import ezdxf
import numpy as np
import pytest
from scipy.integrate import quad

from pathlen.cli import main
from pathlen.estimates.cut import CutSettings, estimate_file
from pathlen.profiles import read_profile_file

PROFILE = """
[profile.slow]
process = "laser"
material = "mild steel"
thickness_mm = 1.0
feed_mm_min = 3000.0
pierce_s = 0.0
rapid_mm_min = 30000.0
accel_mm_s2 = 1000.0
corner_tolerance_mm = 0.05
rate_per_hour = 60.0
"""


@pytest.fixture
def slow(tmp_path):
    path = tmp_path / "shop.toml"
    path.write_text(PROFILE)
    return read_profile_file(path)["slow"]


def ellipse_dxf(tmp_path, a, ratio, name="slit.dxf"):
    doc = ezdxf.new()
    doc.header["$INSUNITS"] = 4
    doc.modelspace().add_ellipse((0, 0), (a, 0), ratio)
    path = tmp_path / name
    doc.saveas(path)
    return str(path)


def curvature_limited_time(a, b, feed, accel, tol):
    """Lower bound (s) of cutting an ellipse: ∫ ds / min(F, √(A·max(ρ, δ))) along it, ρ the radius of
    curvature (a² sin² t + b² cos² t)^(3/2) / (ab) (classical); accelerating only adds time."""
    def integrand(t):
        speed = math.hypot(a * math.sin(t), b * math.cos(t))
        rho = speed**3 / (a * b) if b > 0 else 0.0
        return speed / min(feed, math.sqrt(accel * max(rho, tol)))
    return quad(integrand, 0, 2 * math.pi, limit=400, points=[0.0, math.pi])[0]


@pytest.mark.parametrize(("a", "ratio"), [(50.0, 0.01), (15.0, 1e-6), (15.0, 1e-200)])
def test_thin_ellipses_take_a_sensible_time(tmp_path, slow, a, ratio):
    result = estimate_file(ellipse_dxf(tmp_path, a, ratio), CutSettings(slow))
    assert result.ok, result.error
    feed = 3000.0 / 60.0
    b = a * ratio
    lower = curvature_limited_time(a, b, feed, 1000.0, 0.05)
    cutting = result.time_s["cutting"] + result.time_s["motion_losses"]
    assert all(math.isfinite(v) for v in (*result.time_s.values(), *result.cost.values()))
    assert cutting >= 0.9 * lower  # the pieces' mean radius may round the tip a little
    assert cutting <= 2.0 * lower + 2.0  # and nothing like the old 36 s of losses on 4 s of cutting


def test_svg_slit_of_zero_width_gives_finite_json(runner, tmp_path, slow):
    path = tmp_path / "slit.svg"
    path.write_text('<svg xmlns="http://www.w3.org/2000/svg" width="40mm" height="10mm" viewBox="0 0 40 10">'
                    '<ellipse cx="20" cy="5" rx="15" ry="1e-324"/></svg>')
    shop = tmp_path / "shop.toml"
    shop.write_text(PROFILE)
    res = runner.invoke(main, ["cut", str(path), "--profiles", str(shop), "--profile", "slow", "--format", "json"])

    def no_constants(name):
        raise AssertionError(f"{name} in the JSON report")

    doc = json.loads(res.stdout, parse_constant=no_constants)
    entry = doc["files"][0]
    assert entry["ok"], entry["error"]
    assert entry["time_s"]["total"] < 60


def test_circle_pieces_have_the_circle_radius(tmp_path):
    # a circle of radius r: every piece's mean radius (length / turning) is r (classical)
    from pathlen.importers import read_drawing
    from pathlen.measure import measure
    from pathlen.segments import segment_table

    doc = ezdxf.new()
    doc.header["$INSUNITS"] = 4
    doc.modelspace().add_circle((3, 4), 7.0)
    path = tmp_path / "c.dxf"
    doc.saveas(path)
    drawing = read_drawing(path)
    table = segment_table(drawing, measure(drawing))
    length, radius, first = table.turning_pieces(np.array([0]), np.array([True]))
    assert length.sum() == pytest.approx(2 * math.pi * 7.0, rel=1e-12)
    np.testing.assert_allclose(radius, 7.0, rtol=1e-12)
    assert first.tolist() == [0]
