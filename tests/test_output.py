"""Tests of figure and report output (orbitalrender.picture.output)."""

import json
import os
import re
import zlib

import matplotlib.artist
import matplotlib.figure
import numpy as np
import pypdf
import pytest
from PIL import Image

from orbitalrender import __version__
from orbitalrender.cli import main
from orbitalrender.picture.output import (
    METADATA_KEY,
    default_output_path,
    figure_metadata,
    save_figure,
    write_report,
)
from orbitalrender.state.model import eigenstate, real_orbital


def _figure():
    fig = matplotlib.figure.Figure(figsize=(2, 2), dpi=50)
    ax = fig.add_subplot()
    x = np.linspace(-3, 3, 40)
    ax.contour(x, x, np.add.outer(x**2, x**2), levels=[1.0, 4.0], colors="k")
    ax.imshow(np.outer(x, x), extent=(-3, 3, -3, 3))
    ax.set_title("2p$_z$")
    return fig


class _FailingArtist(matplotlib.artist.Artist):
    def draw(self, renderer):
        raise RuntimeError("drawing failed")


def _metadata():
    return figure_metadata(real_orbital(2, 1, 0, label="2pz"), 0.9, 1.25e-3, 64, command="section",
                           plane="xz", fraction_enclosed=np.float64(0.9000001))


def _pdf_literal(data: bytes, key: bytes) -> str:
    """The PDF literal string after /key (ISO 32000-1, 7.3.4.2: backslash escapes)."""
    start = data.index(b"/" + key + b" (") + len(key) + 3
    out, i = bytearray(), start
    while data[i:i + 1] != b")":
        if data[i:i + 1] == b"\\":
            i += 1
        out += data[i:i + 1]
        i += 1
    return out.decode("latin-1")


def test_metadata_has_the_common_keys():
    md = _metadata()
    assert md["tool"] == "orbitalrender" and md["version"] == __version__
    assert md["state"] == "2pz" and md["fraction"] == 0.9 and md["level_a0^-3"] == 1.25e-3
    assert md["resolution"] == 64 and md["plane"] == "xz"
    assert isinstance(md["fraction_enclosed"], float)
    assert [(t["n"], t["l"], t["m"]) for t in md["terms"]] == [(2, 1, 0)]
    json.dumps(md)  # only JSON types inside
    user = figure_metadata(None, source="field.npy")
    assert user["state"] is None and user["source"] == "field.npy"


def test_png_carries_metadata(tmp_path):
    # PNG tEXt chunks (PNG specification, section 11.3.4) as read back by Pillow.
    path = save_figure(_figure(), tmp_path / "f.png", _metadata())
    with Image.open(path) as im:
        text = im.text
    assert text["Title"] == "2pz"
    assert text["Software"] == f"orbitalrender {__version__}"
    assert "F=0.9" in text["Description"] and "resolution=64" in text["Description"]
    assert json.loads(text[METADATA_KEY]) == _metadata()


def test_svg_carries_metadata_and_vector_contours(tmp_path):
    path = save_figure(_figure(), tmp_path / "f.svg", _metadata())
    svg = path.read_text()
    # Dublin Core elements in the SVG <metadata> block (matplotlib's SVG writer)
    assert "<dc:title>2pz</dc:title>" in svg
    description = re.search(r"<dc:description>(.*?)</dc:description>", svg, re.S).group(1)
    description = description.replace("&quot;", '"').replace("&amp;", "&")
    assert json.loads(description) == _metadata()
    assert f"orbitalrender {__version__}" in svg
    # contours stay vector paths, the density is one embedded raster
    assert svg.count("<image") == 1
    assert re.search(r'<g id="QuadContourSet_1">.*?<path d="M', svg, re.S)


def test_pdf_carries_metadata_and_vector_contours(tmp_path):
    path = save_figure(_figure(), tmp_path / "f.pdf", _metadata())
    data = path.read_bytes()
    assert _pdf_literal(data, b"Title") == "2pz"
    assert _pdf_literal(data, b"Creator") == f"orbitalrender {__version__}"
    assert json.loads(_pdf_literal(data, b"Subject")) == _metadata()
    assert "level_a0^-3=0.00125" in _pdf_literal(data, b"Keywords")
    assert b"/CreationDate" not in data
    # the page content (a Flate stream, ISO 32000-1, 7.4.4) strokes paths: "m", "l"/"c" and "S"
    streams = [zlib.decompressobj().decompress(m.group(1)) for m in
               re.finditer(rb"stream\r?\n(.*?)\r?\nendstream", data, re.S)
               if m.group(1)[:1] == b"x"]
    content = b"".join(streams)
    assert re.search(rb" m\n.*? (l|c)\n.*?\nS\n", content, re.S)
    assert b"/Subtype /Image" in data


@pytest.mark.parametrize("suffix", [".png", ".svg", ".pdf"])
def test_same_inputs_same_bytes(tmp_path, suffix):
    a = save_figure(_figure(), tmp_path / f"a{suffix}", _metadata())
    b = save_figure(_figure(), tmp_path / f"b{suffix}", _metadata())
    assert a.read_bytes() == b.read_bytes()


def test_unknown_suffix_names_the_allowed_ones(tmp_path):
    with pytest.raises(ValueError, match=r"\.png, \.svg, \.pdf"):
        save_figure(_figure(), tmp_path / "f.jpg", {})
    assert not any(tmp_path.iterdir())


def test_failure_leaves_an_earlier_file_intact(tmp_path):
    target = tmp_path / "f.png"
    save_figure(_figure(), target, _metadata())
    before = target.read_bytes()
    broken = _figure()
    broken.axes[0].add_artist(_FailingArtist())  # fails while the file is being written
    with pytest.raises(RuntimeError, match="drawing failed"):
        save_figure(broken, target, _metadata())
    assert target.read_bytes() == before
    assert sorted(os.listdir(tmp_path)) == ["f.png"]  # no temporary file left behind


def test_unwritable_folder(tmp_path):
    with pytest.raises(FileNotFoundError):
        save_figure(_figure(), tmp_path / "missing" / "f.png", {})


def test_report_is_one_json_object(tmp_path):
    path = write_report(tmp_path / "r.json", _metadata())
    assert json.loads(path.read_text()) == _metadata()


def test_default_output_path_is_safe():
    for label in ("1s@(0,0,-0.7) - 1s@(0,0,0.7)", "../../etc/passwd", "", "x" * 500,
                  eigenstate(3, 2, -1).label):
        p = default_output_path(label, "section")
        assert p.parent == type(p)(".") and p.name.endswith("-section.png")
        assert re.fullmatch(r"[A-Za-z0-9._+-]+", p.name) and not p.name.startswith(".")
        assert len(p.name) < 100


def _svg_texts(path) -> list[str]:
    """The contents of the SVG's <text> elements (SVG 1.1, section 10.4) with tags and white space
    stripped (typeset labels put each glyph in a <tspan> of its own, on its own line)."""
    svg = path.read_text()
    return [re.sub(r"\s+", "", re.sub(r"<[^>]+>", "", t))
            for t in re.findall(r"<text\b[^>]*>(.*?)</text>", svg, re.S)]


def _pdf_fonts(path) -> list[tuple[str, str, bool]]:
    """(font subtype, glyph program subtype, embedded) of every font the PDF uses, read by pypdf
    (an outside reader that resolves references and object streams) from the resources of
    every page and every form XObject inside them (ISO 32000-1, 9.6-9.9)."""
    found, seen = [], set()

    def visit(resources):
        if resources is None:
            return
        resources = resources.get_object()
        for font in (resources.get("/Font") or {}).values():
            font = font.get_object()
            if id(font) in seen:
                continue
            seen.add(id(font))
            subtype = str(font["/Subtype"])
            program = font
            if subtype == "/Type0":  # composite font: the glyphs live in its descendant
                program = font["/DescendantFonts"][0].get_object()
            descriptor = program.get("/FontDescriptor")
            descriptor = descriptor.get_object() if descriptor is not None else {}
            embedded = any(k in descriptor for k in ("/FontFile", "/FontFile2", "/FontFile3"))
            found.append((subtype, str(program["/Subtype"]), embedded))
        for xobject in (resources.get("/XObject") or {}).values():
            xobject = xobject.get_object()
            if xobject.get("/Subtype") == "/Form":
                visit(xobject.get("/Resources"))

    for page in pypdf.PdfReader(path).pages:
        visit(page.get("/Resources"))
    return found


def test_saved_text_is_text(tmp_path):
    svg = save_figure(_figure(), tmp_path / "f.svg", _metadata())
    assert any("2p" in t for t in _svg_texts(svg))
    fonts = _pdf_fonts(save_figure(_figure(), tmp_path / "f.pdf", _metadata()))
    assert fonts and all(sub != "/Type3" and prog in ("/TrueType", "/CIDFontType2") and emb
                         for sub, prog, emb in fonts), fonts


# One call of every picture command, small and fast; words expected among the SVG's text
# (white space left out).
_COMMANDS = {
    "figure": (["figure", "2pz", "--resolution", "32", "--size", "300x240", "--supersample", "1"],
               "F=0.9"),
    "layout": (["figure", "2px", "2py", "--resolution", "32", "--size", "420x240", "--supersample", "1"],
               "F=0.9"),
    "strip": (["figure", "1s + 2pz", "--times", "0,4.18879", "--resolution", "32", "--size", "420x240",
               "--supersample", "1"], "t="),
    "section": (["section", "3dz2", "--pixels", "40"], "plane"),
    "radial": (["radial", "2s", "3pz"], "node"),
    # the point cloud, where the command exists (its own defaults; the title names the state)
    "cloud": (["cloud", "2pz"], "2p"),
}


@pytest.mark.parametrize("command", sorted(_COMMANDS))
def test_every_picture_command_keeps_text_as_text(tmp_path, capsys, command):
    from orbitalrender.cli import COMMANDS

    argv, word = _COMMANDS[command]
    if argv[0] not in COMMANDS:
        pytest.skip(f"no {argv[0]} command in this build")
    svg, pdf = tmp_path / "p.svg", tmp_path / "p.pdf"
    assert main([*argv, "--out", str(svg)]) == 0, capsys.readouterr().err
    texts = _svg_texts(svg)
    assert len(texts) >= 3 and any(word in t for t in texts), texts
    assert main([*argv, "--out", str(pdf)]) == 0, capsys.readouterr().err
    fonts = _pdf_fonts(pdf)
    # no Type 3 font; every font a TrueType program (Type 42 in matplotlib's terms), embedded
    assert fonts and all(sub != "/Type3" and prog in ("/TrueType", "/CIDFontType2") and emb
                         for sub, prog, emb in fonts), fonts
