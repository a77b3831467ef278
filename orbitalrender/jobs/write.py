"""Jobs step, the thin last part: write a job's picture and report to files.

Computing (the ``*_job`` functions) and writing are kept apart so a gallery can
write into its own folder, make thumbnails and keep a cache, while the command
line writes where ``--out`` says.
"""

from __future__ import annotations

import os
from collections.abc import Mapping
from pathlib import Path
from typing import Any

__all__ = ["write_picture"]


def write_picture(fig, out: str | os.PathLike, metadata: Mapping[str, Any], *, dpi: float,
                  transparent: bool = False, report: str | os.PathLike | None = None,
                  text_labels: bool = False) -> Path:
    """Save `fig` at `out` with `metadata` embedded; also write `report` (JSON) if given.

    With `text_labels`, labels stay text in SVG (not outlines) and embed as TrueType in
    PDF, as journals ask.
    """
    import matplotlib as mpl

    from ..picture.output import save_figure, write_report

    rc = {"svg.fonttype": "none", "pdf.fonttype": 42} if text_labels else {}
    with mpl.rc_context(rc):
        path = save_figure(fig, out, metadata, dpi=dpi, transparent=transparent)
    if report:
        write_report(report, {**metadata, "file": str(out)})
    return path
