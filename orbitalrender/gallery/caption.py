"""Gallery step, captions: numbers from an output's report filled into its caption on the index page.

A caption may name report values in braces, so that it states what was really made
instead of a number typed by hand::

    caption = "2p_z on a disc, {extent_mm} as printed ({mm_per_a0} like the rest of the set)."

becomes "2p_z on a disc, 37.1 × 37.1 × 60.0 mm as printed (2.04 mm per a0 like the rest
of the set)." when the index is written.  ``{{`` and ``}}`` stand for literal braces.
The names are the keys of :data:`PLACEHOLDERS`, each written in its own way (lengths
to 0.1 mm); a caption naming any other, or giving a format of its own, is refused
when the config is read.  A value the report lacks (an output that failed, or a key that
its kind does not report) shows as "n/a".
"""

from __future__ import annotations

import string
from collections.abc import Callable, Mapping

__all__ = ["PLACEHOLDERS", "check_caption", "fill_caption"]


def _mm(value: float) -> str:
    return f"{value:.1f} mm"  # 0.1 mm: about the finest step of a hobby printer (common practice)


def _box_mm(values) -> str:
    return " × ".join(f"{v:.1f}" for v in values) + " mm"


#: Placeholder -> (report key, how its value is written).
PLACEHOLDERS: dict[str, tuple[str, Callable]] = {
    "extent_mm": ("extent_mm", _box_mm),
    "size_mm": ("size_mm", _mm),
    "orbital_extent_mm": ("orbital_extent_mm", _box_mm),
    "mm_per_a0": ("mm_per_a0", lambda v: f"{v:.3g} mm per a0"),
    "material_cm3": ("material_cm3", lambda v: f"{v:.3g} cm³"),
    "fraction": ("fraction_requested", lambda v: f"{v:g}"),
}


def _fields(text: str) -> list[tuple[str, str, str | None]]:
    """(name, format spec, conversion) of each placeholder in `text`."""
    try:
        return [(name, spec, conversion) for _, name, spec, conversion in string.Formatter().parse(text)
                if name is not None]
    except ValueError as exc:  # a lone brace
        raise ValueError(f"has a brace that opens or closes no placeholder ({exc}); write {{{{ or }}}} "
                         "for a brace") from None


def check_caption(text: str) -> str:
    """`text` if every placeholder in it is known, else ValueError saying which is not.

    Examples
    --------
    >>> check_caption("{size_mm} tall")
    '{size_mm} tall'
    >>> check_caption("{height}")
    Traceback (most recent call last):
    ...
    ValueError: names an unknown placeholder {height}; known: {extent_mm}, {size_mm}, \
{orbital_extent_mm}, {mm_per_a0}, {material_cm3}, {fraction}
    """
    for name, spec, conversion in _fields(text):
        if name not in PLACEHOLDERS:
            known = ", ".join(f"{{{k}}}" for k in PLACEHOLDERS)
            raise ValueError(f"names an unknown placeholder {{{name}}}; known: {known}")
        if spec or conversion:
            raise ValueError(f"formats {{{name}}} itself; write the name alone, as {{{name}}}")
    return text


def fill_caption(text: str, report: Mapping | None) -> str:
    """`text` with each placeholder replaced by the value in `report`, written for a reader.

    Examples
    --------
    >>> fill_caption("{extent_mm}, {material_cm3}", {"extent_mm": [37.09, 37.09, 60.0],
    ...                                               "material_cm3": 21.37})
    '37.1 × 37.1 × 60.0 mm, 21.4 cm³'
    >>> fill_caption("{size_mm} {{tall}}", None)
    'n/a {tall}'
    """
    report = report or {}
    values = {}
    for name, _, _ in _fields(text):
        key, write = PLACEHOLDERS[name]
        values[name] = write(report[key]) if report.get(key) is not None else "n/a"
    return text.format_map(values)
