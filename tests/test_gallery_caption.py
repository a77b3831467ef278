"""Captions: report numbers fill the placeholders; an unknown placeholder is refused with the known ones."""

from __future__ import annotations

import pytest

from orbitalrender.gallery.caption import PLACEHOLDERS, check_caption, fill_caption
from orbitalrender.gallery.config import ConfigError, parse_config


def test_every_placeholder_is_written_from_its_report_key():
    report = {"extent_mm": [37.096, 37.096, 60.0], "size_mm": 60.0, "orbital_extent_mm": [37.1, 37.1, 53.57],
              "mm_per_a0": 2.9359, "material_cm3": 21.374, "fraction_requested": 0.9}
    text = " | ".join(f"{{{name}}}" for name in PLACEHOLDERS)
    assert fill_caption(text, report) == ("37.1 × 37.1 × 60.0 mm | 60.0 mm | 37.1 × 37.1 × 53.6 mm | "
                                          "2.94 mm per a0 | 21.4 cm³ | 0.9")


def test_missing_values_and_literal_braces():
    assert fill_caption("{size_mm} {{as printed}}", {"size_mm": None}) == "n/a {as printed}"
    assert fill_caption("no numbers", None) == "no numbers"


@pytest.mark.parametrize("caption", ["{height}", "a { brace", "{size_mm:.0f}", "{size_mm!r}"])
def test_a_caption_with_an_unknown_placeholder_is_refused_when_the_config_is_read(caption):
    with pytest.raises(ValueError):
        check_caption(caption)
    config = {"outputs": [{"name": "r", "kind": "radial", "states": ["1s"], "caption": caption}]}
    with pytest.raises(ConfigError, match="key 'caption' must be a string whose placeholders"):
        parse_config(config)
