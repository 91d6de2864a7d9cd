"""Lengths of units in millimetres, the internal unit: the one table every reader, option and report
converts by (a module of its own, light to load for the command line)."""

import math

#: Exact length of one unit in millimetres.  Inch-based factors are exact by
#: the international yard and pound agreement (1 in = 25.4 mm); 1 px = 1/96 in
#: (CSS Values and Units); 1 pt = 1/72 in; 1 pc = 12 pt.
MM_PER_UNIT: dict[str, float] = {
    "mm": 1.0,
    "cm": 10.0,
    "dm": 100.0,
    "m": 1000.0,
    "km": 1.0e6,
    "um": 1.0e-3,
    "nm": 1.0e-6,
    "in": 25.4,
    "ft": 304.8,
    "yd": 914.4,
    "mi": 1_609_344.0,
    "mil": 0.0254,
    "uin": 2.54e-5,
    "px": 25.4 / 96.0,
    "pt": 25.4 / 72.0,
    "pc": 25.4 / 6.0,
    "q": 0.25,
    # the rest of the DXF $INSUNITS table: SI prefixes exact; astronomical unit (IAU 2012 B2), light
    # year (IAU: c x Julian year) and parsec (IAU 2015 B2: 648000/pi au) by definition; US survey
    # units from the US survey foot, 1200/3937 m (NIST SP 811, appendix B)
    "angstrom": 1.0e-7,
    "dam": 1.0e4,
    "hm": 1.0e5,
    "Gm": 1.0e12,
    "au": 149_597_870_700_000.0,
    "ly": 9_460_730_472_580_800_000.0,
    "parsec": 149_597_870_700_000.0 * 648_000.0 / math.pi,
    "us_ft": 1_200_000.0 / 3937.0,
    "us_in": 100_000.0 / 3937.0,
    "us_yd": 3_600_000.0 / 3937.0,
    "us_mi": 6_336_000_000.0 / 3937.0,
}
