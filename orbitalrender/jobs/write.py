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
                  transparent: bool = False, report: str | os.PathLike | None = None) -> Path:
    """Save `fig` at `out` with `metadata` embedded (text kept as text in SVG and PDF, see
    :func:`orbitalrender.picture.output.save_figure`); also write `report` (JSON) if given."""
    from ..picture.output import save_figure, write_report

    path = save_figure(fig, out, metadata, dpi=dpi, transparent=transparent)
    if report:
        write_report(report, {**metadata, "file": str(out)})
    return path
