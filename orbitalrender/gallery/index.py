"""Gallery step, last part: the ``index.html`` page that lists every output of a run.

One card per output, in config order: the thumbnail (a downscaled copy of a PNG
output, a small render of a figure saved as SVG or PDF, a small render of a
mesh's surface, or a text placeholder), the output's name, kind, caption (with the
report's numbers filled in: :mod:`orbitalrender.gallery.caption`) and
file, its settings (the config keys in force for it) and its report (the main
numbers, and the whole JSON in a fold-out).  A failed output shows its error.
The page is self-contained (inline style, relative links) and carries no time
stamp, so the same run writes the same page.
"""

from __future__ import annotations

import html
import json
import os
from collections.abc import Sequence
from pathlib import Path

from ..atomic import atomic_path
from .cache import CacheStats
from .caption import fill_caption
from .config import GalleryConfig
from .produce import OutputRecord

__all__ = ["write_index", "render_index", "SUMMARY_KEYS"]

#: Report entries shown on the card (the whole report is in the fold-out).
SUMMARY_KEYS = ("state", "states", "fraction", "fraction_requested", "fraction_enclosed",
                "level_a0^-3", "level", "resolution", "lattice_shape", "components", "genus",
                "watertight", "size_mm", "extent_mm", "mm_per_a0", "material_cm3", "units")

_STYLE = """
body { font-family: system-ui, sans-serif; margin: 2em; color: #222; background: #fafafa; }
h1 { margin-bottom: 0.2em; }
.cards { display: grid; grid-template-columns: repeat(auto-fill, minmax(360px, 1fr)); gap: 1.2em; }
.card { background: #fff; border: 1px solid #ddd; border-radius: 6px; padding: 0.8em; }
.card.failed { border-color: #c33; }
.thumb { display: flex; align-items: center; justify-content: center; height: 330px;
         background: #f3f3f3; border-radius: 4px; }
.thumb img { max-width: 100%; max-height: 320px; }
.placeholder { color: #777; font-style: italic; padding: 1em; text-align: center; }
h2 { font-size: 1.05em; margin: 0.6em 0 0.2em; }
.kind { color: #666; font-weight: normal; }
table { border-collapse: collapse; font-size: 0.85em; width: 100%; }
td { border-top: 1px solid #eee; padding: 2px 4px; vertical-align: top; }
td:first-child { color: #555; white-space: nowrap; }
pre { font-size: 0.75em; overflow-x: auto; background: #f6f6f6; padding: 0.5em; }
.error { color: #a00; }
"""


def _value(v) -> str:
    if isinstance(v, float):
        return f"{v:.6g}"
    if isinstance(v, (list, tuple)):
        return ", ".join(_value(x) for x in v)
    return str(v)


def _rows(items) -> str:
    return "".join(f"<tr><td>{html.escape(str(k))}</td><td>{html.escape(_value(v))}</td></tr>"
                   for k, v in items)


def _link(out_dir: Path, path: Path) -> str:
    return html.escape(Path(os.path.relpath(path, out_dir)).as_posix(), quote=True)


def _card(out_dir: Path, rec: OutputRecord) -> str:
    spec = rec.spec
    if rec.thumbnail is not None:
        thumb = f'<img src="{_link(out_dir, rec.thumbnail)}" alt="{html.escape(spec.name)}">'
    else:
        why = "no picture: the output failed" if rec.error else f"no preview for a {spec.kind} file"
        thumb = f'<div class="placeholder">{html.escape(why)}<br>{html.escape(spec.file)}</div>'
    parts = [f'<div class="card{" failed" if rec.error else ""}" id="{html.escape(spec.name)}">',
             f'<a class="thumb" href="{_link(out_dir, rec.path)}">{thumb}</a>',
             f'<h2>{html.escape(spec.name)} <span class="kind">({spec.kind})</span></h2>']
    caption = spec.options.get("caption")
    if caption:
        parts.append(f"<p>{html.escape(fill_caption(caption, rec.report))}</p>")
    if rec.error:
        parts.append(f'<p class="error">failed: {html.escape(rec.error)}</p>')
    else:
        parts.append(f'<p><a href="{_link(out_dir, rec.path)}">{html.escape(spec.file)}</a> &middot; '
                     f'<a href="{_link(out_dir, rec.report_path)}">report</a></p>')
    settings = [(k, v) for k, v in spec.options.items() if k != "caption"]
    parts.append("<details open><summary>settings</summary><table>" + _rows(settings) + "</table></details>")
    if rec.report:
        summary = [(k, rec.report[k]) for k in SUMMARY_KEYS if rec.report.get(k) is not None]
        parts.append("<details><summary>report</summary><table>" + _rows(summary) + "</table>"
                     f"<pre>{html.escape(json.dumps(rec.report, indent=1, sort_keys=True))}</pre></details>")
    parts.append("</div>")
    return "\n".join(parts)


def render_index(config: GalleryConfig, out_dir: Path, records: Sequence[OutputRecord],
                 stats: CacheStats) -> str:
    """The HTML text of the index page.

    Examples
    --------
    >>> from pathlib import Path
    >>> from orbitalrender.gallery.config import parse_config
    >>> cfg = parse_config({"title": "Demo", "outputs": [{"name": "a", "kind": "radial", "states": ["1s"]}]})
    >>> text = render_index(cfg, Path("."), [], CacheStats())
    >>> "<title>Demo</title>" in text
    True
    """
    from .. import __version__

    failed = sum(1 for r in records if r.error)
    c, lo = stats.computed, stats.loaded
    counts = ", ".join([f"outputs {stats.drawn} drawn / {stats.kept} unchanged and kept"]
                       + [f"{kind}s {c[kind]} computed / {lo[kind]} from the cache" for kind in c])
    head = [
        "<!DOCTYPE html>", '<html lang="en">', "<head>", '<meta charset="utf-8">',
        f"<title>{html.escape(config.title)}</title>", f"<style>{_STYLE}</style>", "</head>", "<body>",
        f"<h1>{html.escape(config.title)}</h1>",
    ]
    if config.description:
        head.append(f"<p>{html.escape(config.description)}</p>")
    head.append(f"<p>{len(records)} outputs from <code>{html.escape(config.path.name)}</code>"
                + (f", <span class='error'>{failed} failed</span>" if failed else "")
                + f"; made by orbitalrender {html.escape(__version__)}. This run: {html.escape(counts)}.</p>")
    body = ['<div class="cards">'] + [_card(out_dir, r) for r in records] + ["</div>", "</body>", "</html>"]
    return "\n".join(head + body) + "\n"


def write_index(config: GalleryConfig, out_dir: Path, records: Sequence[OutputRecord],
                stats: CacheStats) -> Path:
    """Write ``OUT_DIR/index.html`` (atomically) and return its path."""
    path = out_dir / "index.html"
    text = render_index(config, out_dir, records, stats)
    with atomic_path(path) as tmp:
        tmp.write_text(text, encoding="utf-8")
    return path
