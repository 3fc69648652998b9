"""The pages' colours against WCAG 2.1 (W3C Recommendation, 2018/2023): relative luminance and
contrast ratio as defined there, success criteria 1.4.3 (text, AA: 4.5:1) and 1.4.11 (non-text
contrast: 3:1). The formula is checked on exact cases and against an independent implementation
(coloraide's `contrast(method="wcag21")`, from PyPI)."""

from __future__ import annotations

import re
from pathlib import Path

import pytest
from coloraide import Color
from hypothesis import given
from hypothesis import strategies as st

from app.web import palette
from app.web.palette import LEVEL_COLOURS, NON_TEXT_PAIRS, TEXT_PAIRS, contrast_ratio, relative_luminance

hex_colour = st.integers(0, 0xFFFFFF).map(lambda v: f"#{v:06x}")


def test_exact_cases():
    # WCAG 2.1 definitions: black has luminance 0, white 1, so black on white is (1.05 / 0.05) = 21:1.
    assert relative_luminance("#000000") == 0.0
    assert relative_luminance("#ffffff") == pytest.approx(1.0, abs=1e-12)
    assert contrast_ratio("#000000", "#ffffff") == pytest.approx(21.0)
    assert contrast_ratio("#777777", "#777777") == 1.0


def test_known_grey_on_white():
    # #767676 on white is the lightest grey that passes AA for normal text: 4.54:1 (common practice,
    # value from memory; coloraide below is the independent check).
    assert contrast_ratio("#767676", "#ffffff") == pytest.approx(4.54, abs=0.01)
    assert contrast_ratio("#777777", "#ffffff") < 4.5


@given(hex_colour, hex_colour)
def test_matches_reference_library(a, b):
    # WCAG 2.1 linearises below 0.03928, sRGB (IEC 61966-2-1) below 0.04045: no 8-bit value lies
    # between (10/255 < both < 11/255). coloraide takes Y from the full-precision sRGB matrix
    # (0.2126729, 0.7151522, 0.0721750) where WCAG rounds to four places (blue differs by 0.1 %): agreement to 2e-3.
    assert contrast_ratio(a, b) == pytest.approx(Color(a).contrast(b, method="wcag21"), rel=2e-3)
    assert contrast_ratio(a, b) == contrast_ratio(b, a)
    assert 1.0 <= contrast_ratio(a, b) <= 21.0 + 1e-9


@pytest.mark.parametrize("bad", ["", "#fff", "red", "#gggggg", "#1234567"])
def test_bad_colour_is_refused(bad):
    with pytest.raises(ValueError, match="hex_colour"):
        relative_luminance(bad)


@pytest.mark.parametrize("name", sorted(TEXT_PAIRS))
def test_text_reaches_aa(name):
    fg, bg = TEXT_PAIRS[name]
    assert contrast_ratio(fg, bg) >= 4.5, f"{name}: {fg} on {bg} is {contrast_ratio(fg, bg):.2f}:1"
    assert Color(fg).contrast(bg, method="wcag21") >= 4.5


@pytest.mark.parametrize("name", sorted(NON_TEXT_PAIRS))
def test_non_text_reaches_3_to_1(name):
    fg, bg = NON_TEXT_PAIRS[name]
    assert contrast_ratio(fg, bg) >= 3.0, f"{name}: {fg} on {bg} is {contrast_ratio(fg, bg):.2f}:1"


def test_every_level_has_a_badge_pair_and_levels_differ_in_lightness():
    assert sorted(LEVEL_COLOURS) == [0, 1, 2, 3]
    lum = [relative_luminance(LEVEL_COLOURS[n][0]) for n in range(4)]
    assert lum == sorted(lum, reverse=True)  # darker with each level: readable in greyscale too


def test_stylesheet_uses_only_the_palette():
    css = (Path(palette.__file__).with_name("static") / "site.css").read_text()
    body = re.sub(r"/\*.*?\*/", "", css, flags=re.S)
    assert not re.search(r"#[0-9a-fA-F]{3,8}\b|rgb\(|hsl\(", body), "site.css must take its colours from palette.css"
    used = set(re.findall(r"var\(--([a-z0-9-]+)\)", body))
    defined = set(re.findall(r"--([a-z0-9-]+):", palette.css_variables()))
    assert used <= defined, used - defined
