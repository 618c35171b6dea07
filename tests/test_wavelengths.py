"""Dichroic coatings (docs/design.md §3): a beam uses the entry within 2 % of its wavelength;
a beam with no such entry is an error that lists the wavelengths given."""

from __future__ import annotations

import pytest

from benchcheck import LayoutError, beam_table, solve_text

BASE = """format = 1
[bench]
name = "w"
size = [1000, 400]
[[optic]]
id = "M1"
kind = "mirror"
at = [100.0, 200.0]
roc = 500.0
[[optic]]
id = "M2"
kind = "mirror"
at = [350.0, 200.0]
roc = 500.0
reflectivity = {{ {table} }}
[[cavity]]
id = "c"
kind = "linear"
path = ["M1", "M2"]
wavelength_nm = {wl}
output_coupler = "M2"
output_power_w = 1.0
"""


@pytest.mark.parametrize("wl, expected_r", [(1064, 0.98), (1064 * 1.019, 0.98), (532, 0.5)])
def test_entry_within_two_percent_is_used(wl, expected_r):
    doc = beam_table(solve_text(BASE.format(table="1064 = 0.98, 532 = 0.5", wl=wl)))
    # active cavity: one-way circulating power = P_out / T (docs/design.md §4)
    assert doc["cavities"][0]["circulating_w"] == pytest.approx(1.0 / (1.0 - expected_r), rel=1e-9)


def test_no_entry_near_the_wavelength_is_an_error_listing_the_given_ones():
    with pytest.raises(LayoutError) as err:
        solve_text(BASE.format(table="1064 = 0.98, 532 = 0.5", wl=800), file="w.toml")
    msg = str(err.value)
    assert "1064 nm" in msg and "532 nm" in msg and "800 nm" in msg
    assert err.value.loc.line == 15          # the reflectivity key of M2


def test_just_beyond_two_percent_is_not_used():
    with pytest.raises(LayoutError):
        solve_text(BASE.format(table="1064 = 0.98", wl=1064 * 1.021))
