"""The lattice-resolution warning (orbitalrender.surface.resolution): a lattice too coarse for
the radial nodes inside the F surface is named, with the resolution that resolves them."""

from __future__ import annotations

import math

import pytest

from orbitalrender import eigenstate
from orbitalrender.cli import main
from orbitalrender.surface.resolution import unresolved_nodes_message

# 3s: R_30 ~ (27 - 18 r + 2 r^2) e^(-r/3) (Z = 1, a0; Bethe and Salpeter, table 1), so its
# nodes are at r = (9 -+ 3 sqrt 3) / 2 = 1.902 and 7.098 a0: the smallest spacing is the
# first node's distance from the nucleus.
FIRST_3S_NODE_A0 = (9 - 3 * math.sqrt(3)) / 2


def test_the_threshold_is_the_smallest_node_spacing_of_the_shell():
    s3 = eigenstate(3, 0, 0)
    assert unresolved_nodes_message(s3, 0.9, (FIRST_3S_NODE_A0 * 0.99,) * 3, (48,) * 3) is None
    message = unresolved_nodes_message(s3, 0.9, (FIRST_3S_NODE_A0 * 1.01,) * 3, (48,) * 3)
    assert message is not None and f"{FIRST_3S_NODE_A0:.3g} a0" in message
    # two points per spacing over the same span: 47 steps of 1.01 x spacing -> 2 x 47 x 1.01
    assert f"about {math.ceil(2 * 47 * 1.01) + 1} resolves" in message


def test_a_node_free_state_never_warns():
    assert unresolved_nodes_message(eigenstate(3, 2, 0), 0.9, (50.0,) * 3, (8,) * 3) is None


def test_describe_of_30s_on_a_coarse_lattice_warns_in_one_line(capsys):
    # at resolution 64 the surface once came out as 203 regions with negative volumes, silently
    assert main(["describe", "30,0,0", "--fraction", "0.9", "--resolution", "64"]) == 0
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and err[0].startswith("orbitalrender describe: warning: the lattice step")
    assert "(30,0) shell" in err[0] and "resolves them" in err[0]


@pytest.mark.parametrize("state", ["2s", "2pz"])
def test_a_fine_enough_lattice_gives_no_warning(state, capsys):
    assert main(["describe", state, "--fraction", "0.9", "--resolution", "48"]) == 0
    assert capsys.readouterr().err == ""
