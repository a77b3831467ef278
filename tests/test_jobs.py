"""The jobs layer: one definition of every option serves the command line and the gallery.

The command line's flags are read from the running parser and the gallery's keys from
its schema; both must offer the same options with the same defaults, and refuse the
same out-of-range values in the same words.  The names of a few light constants that
the definitions spell out are checked against the library modules that use them.
"""

from __future__ import annotations

import argparse
import json
import math
import re

import pytest

from orbitalrender.cli import build_parser, main
from orbitalrender.gallery.config import SCHEMA, ConfigError, job_options, parse_config
from orbitalrender.jobs import KINDS, option, options_of
from orbitalrender.jobs.option import build, flag_of, key_of

#: Gallery kind -> the command that makes the same output.
COMMAND_OF = {"figure": "figure", "layout": "figure", "section": "section", "radial": "radial",
              "mesh": "mesh"}
#: Gallery keys that are not options of a job (what to make, where, and which STATE).
GALLERY_OWN = {"name", "kind", "file", "caption", "state", "states"}


def _subcommands() -> dict[str, argparse.ArgumentParser]:
    for action in build_parser()._actions:
        if isinstance(action, argparse._SubParsersAction):
            return dict(action.choices)
    raise AssertionError("no subcommands")


def _cli_options(command: str) -> dict[str, argparse.Action]:
    """dest -> action of every flag of `command` (help excluded), from the running parser."""
    return {a.dest: a for a in _subcommands()[command]._actions
            if a.option_strings and a.dest != "help"}


def _both(kind: str) -> dict[str, tuple]:
    """Field -> (Option, default) of the fields of `kind` that have a flag and a gallery key."""
    cls = KINDS[kind]
    return {name: (opt, default) for name, (opt, default) in options_of(cls).items()
            if flag_of(name, opt, default) and key_of(name, opt)
            and name not in getattr(cls, "NOT_IN_GALLERY", ())}


#: Command -> the options dataclass its flags come from (figure makes figures and layouts).
COMMAND_CLASS = {"figure": KINDS["layout"], "section": KINDS["section"], "radial": KINDS["radial"],
                 "mesh": KINDS["mesh"]}


@pytest.mark.parametrize("kind", sorted(COMMAND_OF))
def test_command_line_and_gallery_offer_the_same_options(kind):
    cli = _cli_options(COMMAND_OF[kind])  # from the running parser
    gallery = {k for k, key in SCHEMA.items() if kind in key.kinds} - GALLERY_OWN  # from the schema
    command = options_of(COMMAND_CLASS[COMMAND_OF[kind]])
    assert set(cli) <= set(command), "a flag that is not an option field"
    # the kind's gallery keys, by the definitions' field names, are the command's flags minus
    # those the gallery sets itself (out, report) or that one flag sets together (--size)
    defs = options_of(KINDS[kind])
    keyed = {key_of(n, o): n for n, (o, _) in defs.items()}
    assert set(keyed) - {""} >= gallery
    from_gallery = {keyed[k] for k in gallery}
    cli_only = {n for n, (o, _) in command.items() if not key_of(n, o)}
    spread = {f for o, _ in command.values() for f in o.spread[1:]}
    expected = set(cli) - cli_only
    if kind == "figure":  # a figure is one picture: the panel options belong to a layout
        expected -= set(command) - set(defs)
    else:
        expected -= set(getattr(KINDS[kind], "NOT_IN_GALLERY", ()))
    assert from_gallery - spread == expected, (kind, from_gallery ^ expected)


@pytest.mark.parametrize("kind", sorted(COMMAND_OF))
def test_command_line_and_gallery_defaults_agree(kind):
    cli = _cli_options(COMMAND_OF[kind])
    unset = job_options(kind, {})  # a gallery output that sets nothing
    for name, (_, default) in _both(kind).items():
        if COMMAND_OF[kind] == "figure" and name in options_of(KINDS["layout"]):
            default = options_of(KINDS["layout"])[name][1]
        assert getattr(unset, name) == default, name
        if name in cli:
            assert cli[name].default == default, (kind, name, cli[name].default, default)


def test_one_fraction_default_for_every_kind():
    # the surface (and the radius marked on a radial plot) holds 90 % unless asked
    for kind in COMMAND_OF:
        assert job_options(kind, {}).fraction == 0.9, kind
        assert _cli_options(COMMAND_OF[kind])["fraction"].default == 0.9, kind
    assert not _cli_options("mesh")["fraction"].required


def _refused(opt) -> object | None:
    """A value just outside the option's range (or not among its choices), as typed."""
    if opt.choices is not None:
        return "bogus"
    if opt.type not in ("number", "integer"):
        return None
    step = 1 if opt.type == "integer" else 0.5
    if opt.lo is not None:
        v = opt.lo if opt.lo_open else opt.lo - step
    elif opt.hi is not None:
        v = opt.hi if opt.hi_open else opt.hi + step
    else:
        return None
    return int(v) if opt.type == "integer" else float(v)


_STATE = {"figure": ["2pz"], "layout": ["2pz"], "section": ["2pz"], "radial": ["2pz"], "mesh": ["2pz"]}
_MUST = re.compile(r" must be (.*)$")


def _cli_refusal(kind, flag, value, tmp_path, capsys) -> str:
    text = f"{value}x100" if flag == "--size" else str(value)
    status = main([COMMAND_OF[kind], *_STATE[kind], flag, text, "--out", str(tmp_path / "x.png")
                   if kind != "mesh" else str(tmp_path / "x.ply")])
    err = capsys.readouterr().err.strip()
    assert status == 2 and "\n" not in err, err
    return _MUST.search(err).group(1)


def _gallery_refusal(kind, key, value) -> str:
    out = {"name": "o", "kind": kind, key: value}
    out |= {"states": ["2pz"]} if kind in ("radial", "layout") else {"state": "2pz"}
    with pytest.raises(ConfigError) as exc:
        parse_config({"outputs": [out]}, "demo.toml")
    text = str(exc.value)
    assert text.startswith(f"demo.toml: output 'o' (outputs[0]): key '{key}' must be "), text
    return _MUST.search(text).group(1)


@pytest.mark.parametrize("kind", sorted(COMMAND_OF))
def test_out_of_range_values_are_refused_in_the_same_words(kind, tmp_path, capsys):
    checked = 0
    for name, (opt, default) in _both(kind).items():
        value = _refused(opt)
        if value is None:
            continue
        flag = flag_of(name, opt, default)
        assert _cli_refusal(kind, flag, value, tmp_path, capsys) == \
            _gallery_refusal(kind, key_of(name, opt), value), (kind, name)
        checked += 1
    assert checked >= 3
    assert list(tmp_path.iterdir()) == []


@pytest.mark.parametrize("argv, key, value, words", [
    # boundary values named in the definitions; both front ends refuse them alike
    (["figure", "2pz", "--fraction", "1"], "fraction", 1.0, "a number in (0, 0.9999], got 1.0"),
    (["figure", "2pz", "--fraction", "0"], "fraction", 0.0, "a number in (0, 0.9999], got 0.0"),
    (["figure", "2pz", "--size", "63x100"], "width_px", 63, "an integer in [64, 8192], got 63"),
    (["figure", "2pz", "--size", "8193x100"], "width_px", 8193, "an integer in [64, 8192], got 8193"),
    (["figure", "2pz", "--supersample", "0"], "supersample", 0, "an integer in [1, 4], got 0"),
    (["figure", "2pz", "--dpi", "2400.5"], "dpi", 2400.5, "a number in [10, 2400], got 2400.5"),
    (["figure", "2pz", "--elevation", "-90.5"], "elevation_deg", -90.5,
     "a number in [-90, 90], got -90.5"),
    (["figure", "2pz", "--translucent-outer", "0"], "translucent_outer", 0.0,
     "a number in (0, 1], got 0.0"),
])
def test_boundary_values(argv, key, value, words, tmp_path, capsys):
    assert main([*argv, "--out", str(tmp_path / "x.png")]) == 2
    assert capsys.readouterr().err.strip().endswith(words)
    assert _gallery_refusal("figure", key, value) == words


def test_values_inside_the_range_are_taken():
    # the closed ends are allowed, the open ones not (see the boundary values above)
    o = build(KINDS["layout"], {"supersample": "4", "dpi": "2400", "elevation_deg": "-90",
                                "translucent_outer": "1", "width_px": 64, "shell": "7"}, text=True)
    assert (o.supersample, o.dpi, o.elevation_deg, o.translucent_outer, o.width_px, o.shell) == \
        (4, 2400.0, -90.0, 1.0, 64, 7)


def test_a_new_field_is_a_flag_and_a_key_at_once():
    # what the package docstring tells another engineer: one field, nothing else
    from dataclasses import dataclass

    from orbitalrender.cli.common import add_options, options_from

    @dataclass(frozen=True)
    class Demo:
        mm_per_a0: float | None = option(None, "millimetres per a0", lo=0, lo_open=True, unit="mm")

    parser = argparse.ArgumentParser()
    add_options(parser, Demo)
    assert options_from(parser.parse_args(["--mm-per-a0", "2.5"]), Demo).mm_per_a0 == 2.5
    with pytest.raises(ValueError, match=r"^--mm-per-a0 must be a number > 0, got -1.0$"):
        options_from(parser.parse_args(["--mm-per-a0=-1"]), Demo)
    assert "millimetres per a0, > 0" in parser.format_help()


def test_names_spelled_out_agree_with_the_library():
    # the definitions name these without importing the heavy modules that use them
    from orbitalrender.jobs import radial, shared
    from orbitalrender.lattice.sampler import PRECISIONS
    from orbitalrender.picture.radialplot import RADIAL_QUANTITIES

    assert shared.PRECISION_NAMES == tuple(PRECISIONS)
    assert radial.RADIAL_QUANTITIES == RADIAL_QUANTITIES


def test_unit_and_preset_names_are_those_with_codata_values():
    from orbitalrender.state.units import LENGTH_UNITS, LENGTH_UNITS_PER_A0, NUCLEUS_NAMES, NUCLEUS_PRESETS

    assert LENGTH_UNITS == tuple(LENGTH_UNITS_PER_A0)
    assert NUCLEUS_NAMES == tuple(NUCLEUS_PRESETS)


def test_describe_report_from_the_job():
    # <r> of 2p is 5 a0 (Bethe and Salpeter, eq. 3.26: <r> = (3 n^2 - l(l+1)) / 2Z)
    from orbitalrender.jobs import DescribeOptions, describe_job
    from orbitalrender.state.model import eigenstate

    report = describe_job(eigenstate(2, 1, 0), DescribeOptions())
    assert math.isclose(report["mean_radius_a0"], 5.0, rel_tol=1e-9)
    assert "components" not in report  # no fraction: no surface


def test_describe_json_has_no_surface_unless_asked(capsys):
    assert main(["describe", "1s", "--json"]) == 0
    assert "level" not in json.loads(capsys.readouterr().out)
