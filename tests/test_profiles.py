"""Process profiles: every kind of bad profile gives one clear line and exit status 2."""

import re
from pathlib import Path

import pytest

import pathlen
from pathlen.cli import main
from pathlen.errors import UsageError
from pathlen.profiles import BUILTIN, load_profiles, read_profile_file, write_setting

GOOD = """
[profile.test-laser]
process = "laser"
material = "mild steel"
thickness_mm = 2.0
feed_mm_min = 3000.0
pierce_s = 0.5
rapid_mm_min = 60000.0
accel_mm_s2 = 5000.0
rate_per_hour = 90.0
"""


def write(tmp_path, text, name="p.toml"):
    path = tmp_path / name
    path.write_text(text)
    return path


@pytest.mark.parametrize(("change", "words"), [
    (("feed_mm_min = 3000.0", "feed_m_min = 3.0"), ["feed_m_min", "wrong unit", "feed_mm_min"]),
    (("feed_mm_min = 3000.0", "feed_in_min = 118.0"), ["feed_in_min", "wrong unit"]),
    (("pierce_s = 0.5", "pierce_ms = 500"), ["pierce_ms", "wrong unit", "pierce_s"]),
    (("feed_mm_min = 3000.0", "feed_mm_min = -3000.0"), ["feed_mm_min", "negative"]),
    (("rapid_mm_min = 60000.0", "rapid_mm_min = 0"), ["rapid_mm_min", "greater than 0"]),
    (("feed_mm_min = 3000.0", 'feed_mm_min = "3000 mm/min"'), ["feed_mm_min", "must be a number", "unit"]),
    (("feed_mm_min = 3000.0", "fead_mm_min = 3000.0"), ["fead_mm_min", "unknown setting", "feed_mm_min"]),
    (("feed_mm_min = 3000.0", ""), ["feed_mm_min", "missing", "laser"]),
    (('process = "laser"', 'process = "router"'), ["process", "laser, plasma, waterjet"]),
    (("thickness_mm = 2.0", "thickness_mm = nan"), ["thickness_mm", "finite"]),
    (('material = "mild steel"', "material = 42"), ["material", "text"]),
    (("pierce_s = 0.5", "pierce_s = 0.5\nkerf_offset = 1"), ["kerf_offset", "true or false"]),
    (("pierce_s = 0.5", "pierce_s = 0.5\nquality = 7"), ["quality", "at most 5"]),
    (("[profile.test-laser]", "[profile.test-laser\n"), ["not valid TOML"]),
    (("[profile.test-laser]", "[profiles.test-laser]"), ["unknown table", "profiles"]),
])
def test_bad_profiles_one_line_exit_2(runner, tmp_path, change, words):
    path = write(tmp_path, GOOD.replace(*change))
    res = runner.invoke(main, ["profiles", "--profiles", str(path)])
    assert res.exit_code == 2, res.output
    message = res.output.strip().splitlines()[-1]
    assert str(path) in message or "p.toml" in message
    for w in words:
        assert w in message, message
    assert "Traceback" not in res.output


def test_waterjet_needs_feed_or_model(runner, tmp_path):
    text = GOOD.replace('process = "laser"', 'process = "waterjet"').replace("feed_mm_min = 3000.0\n", "")
    res = runner.invoke(main, ["profiles", "--profiles", str(write(tmp_path, text))])
    assert res.exit_code == 2 and "pressure_mpa" in res.output


def test_missing_profile_file(runner, tmp_path):
    res = runner.invoke(main, ["profiles", "--profiles", str(tmp_path / "nope.toml")])
    assert res.exit_code == 2 and "no such profile file" in res.output


def test_good_profile_lists_with_builtins(runner, tmp_path):
    res = runner.invoke(main, ["profiles", "--profiles", str(write(tmp_path, GOOD))])
    assert res.exit_code == 0, res.output
    assert "test-laser" in res.output and "steel-3mm-laser" in res.output


def test_builtin_numbers_are_labelled():
    # Every number shipped in the example profiles says where it comes from (brief: common practice / from memory).
    numeric = re.compile(r"^\s*\w+\s*=\s*[-+]?\d")
    for line in BUILTIN.read_text().splitlines():
        if numeric.match(line):
            assert line.rstrip().endswith(("# common practice", "# from memory")), line
    assert len(load_profiles()) >= 4


def test_write_setting_keeps_the_rest(tmp_path):
    path = write(tmp_path, GOOD + '\n[profile.other]\nprocess = "plasma"\n# a comment to keep\n')
    write_setting(path, "test-laser", "pierce_s", 0.75)
    write_setting(path, "test-laser", "kerf_mm", 0.2)
    text = path.read_text()
    assert "# a comment to keep" in text
    assert text.index("kerf_mm") < text.index("[profile.other]")
    values = load_profiles([write(tmp_path, text.split("[profile.other]")[0], "q.toml")])["test-laser"].values
    assert values["pierce_s"] == 0.75 and values["kerf_mm"] == 0.2


def test_no_alias_for_a_firmware_setting_name(tmp_path):
    # the corner setting is ours (corner_tolerance_mm); a firmware's name for it is just an unknown setting
    path = write(tmp_path, GOOD + "junction_deviation_mm = 0.05\n")
    with pytest.raises(UsageError) as err:
        read_profile_file(path)
    assert "unknown setting" in str(err.value) and "renamed" not in str(err.value)
    source = "".join(p.read_text() for p in Path(pathlen.__file__).parent.rglob("*.py"))
    assert "junction" not in source
