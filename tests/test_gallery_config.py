"""Validation of gallery configs: every kind of mistake gives one line naming file, table and key."""

from __future__ import annotations

import textwrap
from pathlib import Path

import numpy as np
import pytest

from orbitalrender.gallery.config import KINDS, SCHEMA, ConfigError, load_config, parse_config


def _write(tmp_path: Path, text: str, name: str = "g.toml") -> Path:
    p = tmp_path / name
    p.write_text(textwrap.dedent(text), encoding="utf-8")
    return p


GOOD = """
title = "Test gallery"
[defaults]
fraction = 0.8
resolution = 48
phase_map = "cvd"

[[outputs]]
name = "p"
kind = "figure"
state = "2pz"

[[outputs]]
name = "r"
kind = "radial"
states = ["1s", "2s"]
fraction = 0.5

[[outputs]]
name = "strip"
kind = "layout"
state = "(2,1,1) + (3,2,1)"
times = [0.0, 10.0]
"""


def test_good_config_merges_defaults_and_parses_states(tmp_path):
    cfg = load_config(_write(tmp_path, GOOD))
    assert cfg.title == "Test gallery"
    p, r, strip = cfg.outputs
    assert p.options == {"fraction": 0.8, "resolution": 48, "phase_map": "cvd", "state": "2pz"}
    assert p.file == "p.png" and p.report_file == "p.png.json"
    # a default that does not apply to a kind is left out for it (radial draws no surface)
    assert r.options == {"fraction": 0.5, "states": ["1s", "2s"]}
    assert [s.terms[0].n for s in r.states] == [1, 2]
    # a time strip: one state per time, the same terms at different times
    assert [s.time_au for s in strip.states] == [0.0, 10.0]


def _message(tmp_path: Path, text: str) -> str:
    path = _write(tmp_path, text)
    with pytest.raises(ConfigError) as info:
        load_config(path)
    message = str(info.value)
    assert "\n" not in message
    assert message.startswith(str(path) + ": ")
    return message


@pytest.mark.parametrize("body, expected", [
    # out of range, with the exact wording of the message
    ('name = "shell3"\nkind = "figure"\nstate = "3s"\nfraction = 1.5',
     "output 'shell3' (outputs[1]): key 'fraction' must be a number in (0, 0.9999], got 1.5"),
    # wrong type
    ('name = "shell3"\nkind = "figure"\nstate = "3s"\nresolution = "high"',
     "output 'shell3' (outputs[1]): key 'resolution' must be an integer in [8, 1024], got 'high'"),
    ('name = "shell3"\nkind = "figure"\nstate = "3s"\nresolution = 64.0',
     "key 'resolution' must be an integer"),
    ('name = "shell3"\nkind = "figure"\nstate = "3s"\nZ = true',
     "key 'Z' must be a number in [0.01, 137], got true"),
    # allowed values
    ('name = "shell3"\nkind = "figure"\nstate = "3s"\nphase_map = "rainbow"',
     "key 'phase_map' must be one of 'uniform', 'cvd', 'sign', got 'rainbow'"),
    ('name = "x"\nkind = "poster"\nstate = "3s"', "output 'x' (outputs[1]): key 'kind' must be one of"),
    # the sign map of a complex state (the rule of orbitalrender.state.phase)
    ('name = "x"\nkind = "section"\nstate = "2,1,1"\nphase_map = "sign"',
     "key 'phase_map' cannot be 'sign' for a complex state"),
    # unknown key, with a hint for a near miss
    ('name = "x"\nkind = "figure"\nstate = "3s"\nphase-map = "cvd"',
     "key 'phase-map' is not a known key (did you mean 'phase_map'?)"),
    ('name = "x"\nkind = "figure"\nstate = "3s"\ncolour = "red"', "key 'colour' is not a known key"),
    # a key that does not apply to the kind
    ('name = "x"\nkind = "radial"\nstates = ["3s"]\nresolution = 64',
     "key 'resolution' does not apply to a radial output"),
    # a bad STATE is reported with the key it came from
    ('name = "x"\nkind = "figure"\nstate = "3,3,0"', "key 'state' must be a valid STATE"),
    ('name = "x"\nkind = "figure"\nstate = "2q"', "key 'state' must be a valid STATE"),
    # missing pieces
    ('kind = "figure"\nstate = "1s"', "outputs[1]: key 'name' is missing"),
    ('name = "x"\nkind = "figure"', "output 'x' (outputs[1]): give 'state' or 'field'"),
    ('name = "x"\nkind = "layout"\nstate = "1s"', "a layout needs one of 'states'"),
    # files
    ('name = "x"\nkind = "figure"\nstate = "1s"\nfile = "../x.png"',
     "key 'file' must be a relative file name"),
    ('name = "x"\nkind = "mesh"\nstate = "1s"\nfile = "x.png"', "ending in .stl, .glb, .ply, .obj"),
    ('name = "x"\nkind = "figure"\nfield = "missing.npz"', "key 'field' must be the name of an existing"),
    # a bad name
    ('name = "a b"\nkind = "figure"\nstate = "1s"', "key 'name' must be a name of letters"),
])
def test_broken_output_gives_one_line_naming_the_key(tmp_path, body, expected):
    text = '[[outputs]]\nname = "ok"\nkind = "radial"\nstates = ["1s"]\n\n[[outputs]]\n' + body + "\n"
    assert expected in _message(tmp_path, text)


def test_duplicate_names_and_files_are_refused(tmp_path):
    twice = '[[outputs]]\nname = "a"\nkind = "radial"\nstates = ["1s"]\n' * 2
    assert "output 'a' (outputs[1]): key 'name' must be unique, got 'a' which outputs[0] already uses" \
        in _message(tmp_path, twice)
    same_file = ('[[outputs]]\nname = "a"\nkind = "radial"\nstates = ["1s"]\n'
                 '[[outputs]]\nname = "b"\nkind = "radial"\nstates = ["1s"]\nfile = "A.png"\n')
    assert "output 'b' (outputs[1]): key 'file' must be unique" in _message(tmp_path, same_file)


def test_defaults_and_top_level_errors(tmp_path):
    out = '\n[[outputs]]\nname = "a"\nkind = "radial"\nstates = ["1s"]\n'
    assert "defaults: key 'fraction' must be a number in (0, 0.9999], got 0" in \
        _message(tmp_path, "[defaults]\nfraction = 0\n" + out)
    assert "defaults: key 'name' can only be set in an output" in \
        _message(tmp_path, '[defaults]\nname = "x"\n' + out)
    assert "key 'output' is not a known top-level key" in _message(tmp_path, '[[output]]\nname = "a"\n')
    assert "key 'outputs' must be a non-empty list of tables" in _message(tmp_path, 'title = "x"\n')
    assert "not valid TOML" in _message(tmp_path, "[[outputs]\nname = 1\n")


def test_missing_config_file(tmp_path):
    with pytest.raises(FileNotFoundError, match="does not exist"):
        load_config(tmp_path / "nope.toml")


def test_user_field_needs_spacing_for_npy(tmp_path):
    np.save(tmp_path / "psi.npy", np.ones((4, 4, 4), dtype=np.complex64))
    text = '[[outputs]]\nname = "f"\nkind = "figure"\nfield = "psi.npy"\n'
    assert "key 'field_spacing_a0' is needed for an .npy field" in _message(tmp_path, text)
    cfg = load_config(_write(tmp_path, text + "field_spacing_a0 = 0.5\n"))
    # the field path is resolved against the config's folder
    assert cfg.outputs[0].options["field"] == str(tmp_path / "psi.npy")
    assert cfg.outputs[0].states == ()


def test_every_schema_key_applies_to_known_kinds_and_has_a_description():
    for key in SCHEMA.values():
        assert key.kinds and set(key.kinds) <= set(KINDS), key.name
        assert key.expected, key.name


def test_layout_of_a_shell():
    cfg = parse_config({"outputs": [{"name": "n2", "kind": "layout", "shell": 2, "basis": "complex"}]})
    assert [s.label for s in cfg.outputs[0].states] == ["2,0,0", "2,1,-1", "2,1,0", "2,1,1"]


def test_parse_config_accepts_a_dict():
    cfg = parse_config({"outputs": [{"name": "m", "kind": "mesh", "state": "2pz", "file": "m.glb"}]})
    assert cfg.outputs[0].file == "m.glb"


def test_a_control_character_in_a_file_name_is_refused(tmp_path):
    # TOML's "\u0000" escape puts a real NUL into the string (TOML 1.0, basic strings)
    for escape in ("\\u0000", "\\u001b", "\\t"):
        text = f'[[outputs]]\nname = "a"\nkind = "radial"\nstates = ["1s"]\nfile = "a{escape}b.png"\n'
        assert "key 'file' must be a relative file name" in _message(tmp_path, text)


@pytest.mark.parametrize("first, second", [("a.png", "a.png/b.png"), ("a.png/b.png", "a.png"),
                                           ("sub/A.png", "sub/a.png/c.png")])
def test_a_file_that_would_have_to_be_a_folder_of_another_is_refused(tmp_path, first, second):
    text = (f'[[outputs]]\nname = "one"\nkind = "radial"\nstates = ["1s"]\nfile = "{first}"\n'
            f'[[outputs]]\nname = "two"\nkind = "radial"\nstates = ["1s"]\nfile = "{second}"\n')
    message = _message(tmp_path, text)
    assert "output 'two' (outputs[1]): key 'file' must not nest with another output's file" in message
    # and the command line calls it an input mistake, before any output is made
    from orbitalrender.cli import main

    assert main(["gallery", str(_write(tmp_path, text)), "--out", str(tmp_path / "out"), "--quiet"]) == 2
    assert not (tmp_path / "out").exists()
