"""Tests of the radial plots (orbitalrender.picture.radialplot) against closed forms and sympy."""

import math

import numpy as np
import pytest
from scipy.optimize import brentq
from sympy import lambdify, symbols
from sympy.physics.hydrogen import R_nl

from orbitalrender.picture.radialplot import draw_radial, radial_figure, radial_marks
from orbitalrender.state.model import eigenstate, real_orbital, superpose
from orbitalrender.state.notation import parse_state, pretty_label
from orbitalrender.state.units import a0_to


def _vertical_lines(ax):
    """x positions of the axvline artists (constant-x lines spanning the axes)."""
    out = []
    for line in ax.lines:
        x = np.asarray(line.get_xdata(), dtype=float)
        if len(x) == 2 and x[0] == x[1] and tuple(line.get_ydata()) == (0, 1):
            out.append(float(x[0]))
    return out


def test_3s_node_radii_are_the_closed_form_roots():
    # R_30 ~ (27 - 18 r + 2 r^2) e^{-r/3} (closed form, r in a0): nodes at (9 -+ 3 sqrt 3)/2 a0.
    marks = radial_marks(eigenstate(3, 0, 0))
    expected = [(9 - 3 * math.sqrt(3)) / 2, (9 + 3 * math.sqrt(3)) / 2]
    np.testing.assert_allclose(marks.node_radii_a0, expected, rtol=1e-10)
    import matplotlib.figure
    ax = matplotlib.figure.Figure().add_subplot()
    draw_radial(ax, [eigenstate(3, 0, 0, label="3s")], "R")
    xs = _vertical_lines(ax)
    for r in expected:
        assert min(abs(x - r) for x in xs) < 1e-9
    # the open circles sit on R = 0 at the nodes
    (circles,) = [ln for ln in ax.lines if ln.get_marker() == "o"]
    np.testing.assert_allclose(circles.get_xdata(), expected, rtol=1e-10)
    np.testing.assert_allclose(circles.get_ydata(), 0.0, atol=1e-12)


@pytest.mark.parametrize("n, Z", [(2, 1.0), (3, 1.0), (2, 2.0), (4, 3.0)])
def test_most_probable_radius_of_l_n_minus_1_is_n2_over_Z(n, Z):
    # For l = n - 1, r^2 R^2 ~ r^{2n} e^{-2Zr/n}, largest at r = n^2 a0 / Z (closed form).
    marks = radial_marks(eigenstate(n, n - 1, 0, Z=Z))
    assert marks.most_probable_a0 == pytest.approx(n * n / Z, rel=1e-8)
    assert marks.node_radii_a0 == ()


def test_2p_most_probable_radius_is_marked_in_angstrom():
    # 4 a0 in angstrom with the CODATA Bohr radius (scipy.constants via a0_to)
    fig, marks = radial_figure([real_orbital(2, 1, 1, label="2px")], ["density"], units="angstrom")
    ax = fig.axes[0]
    r_mp = 4.0 * a0_to("angstrom")
    assert min(abs(x - r_mp) for x in _vertical_lines(ax)) < 1e-7
    (peak,) = [ln for ln in ax.lines if ln.get_marker() == "v"]
    assert peak.get_xdata()[0] == pytest.approx(r_mp, rel=1e-8)
    # the density curve in 1/angstrom is still normalised: int r^2 R^2 dr = P(r < r_max) ~ 1
    curve = ax.lines[0]
    x, y = np.asarray(curve.get_xdata()), np.asarray(curve.get_ydata())
    assert np.trapezoid(y, x) == pytest.approx(1.0, abs=2e-3)


def test_radius_holding_F_for_1s_matches_the_closed_form():
    # 1s: P(r < x) = 1 - e^{-2x}(1 + 2x + 2x^2) (closed form)
    F = 0.75
    x = brentq(lambda r: 1 - math.exp(-2 * r) * (1 + 2 * r + 2 * r * r) - F, 1e-6, 40, xtol=1e-14)
    fig, marks = radial_figure([eigenstate(1, 0, 0, label="1s")], ["cumulative"], fraction=F)
    assert marks[0].holding_a0 == pytest.approx(x, rel=1e-10)
    ax = fig.axes[0]
    (square,) = [ln for ln in ax.lines if ln.get_marker() == "s"]
    assert (square.get_xdata()[0], square.get_ydata()[0]) == pytest.approx((x, F))
    curve = ax.lines[0]
    r, p = np.asarray(curve.get_xdata()), np.asarray(curve.get_ydata())
    np.testing.assert_allclose(p, 1 - np.exp(-2 * r) * (1 + 2 * r + 2 * r * r), atol=1e-12)


def test_R_curves_match_sympy():
    # sympy.physics.hydrogen.R_nl(n, l, r, Z) as the reference radial function
    r_ = symbols("r", positive=True)
    states = [eigenstate(3, 1, -1, label="3,1,-1"), real_orbital(4, 2, 2, Z=2.0, label="4dx2-y2 (Z=2)")]
    fig, _ = radial_figure(states, ["R"])
    ax = fig.axes[0]
    # the legend typesets |n, l, m> and, as the states' Z differ, names Z where it is not 1
    names = (pretty_label("3,1,-1"), "4dx2-y2 (Z=2), Z = 2")
    curves = [ln for ln in ax.lines if ln.get_label() in names]
    assert len(curves) == 2
    for line, (n, l, Z) in zip(curves, [(3, 1, 1), (4, 2, 2)]):
        ref = lambdify(r_, R_nl(n, l, r_, Z), "numpy")
        x = np.asarray(line.get_xdata())
        np.testing.assert_allclose(line.get_ydata(), ref(x), atol=1e-12)
    labels = [t.get_text() for t in fig.legends[0].get_texts()]
    assert labels == list(names)


def test_shell_combinations_are_allowed_others_not():
    # any combination within one (n, l) on one centre has radial function R_nl
    mix = superpose([(1, eigenstate(3, 2, 2)), (1j, eigenstate(3, 2, -1))], label="mix")
    assert radial_marks(mix).n == 3
    with pytest.raises(ValueError, match="one \\(n, l\\) shell"):
        radial_marks(parse_state("1s + 2pz"))
    with pytest.raises(ValueError, match="one \\(n, l\\) shell"):
        radial_figure([parse_state("1s@(0,0,-1) + 1s@(0,0,1)")])
    with pytest.raises(ValueError, match="unknown radial quantity"):
        radial_figure([eigenstate(1, 0, 0)], ["psi"])
    with pytest.raises(ValueError, match="fraction"):
        radial_marks(eigenstate(1, 0, 0), 1.0)


def test_all_panels_share_the_radial_axis():
    fig, marks = radial_figure([parse_state("3s"), parse_state("3pz")])
    assert len(fig.axes) == 3
    limits = {ax.get_xlim() for ax in fig.axes}
    assert len(limits) == 1
    assert fig.axes[-1].get_xlabel() == "$r$ ($a_0$)"
    # 3p: one radial node, at 6 a0 (R_31 ~ r (6 - r) e^{-r/3}, closed form)
    np.testing.assert_allclose(marks[1].node_radii_a0, [6.0], rtol=1e-10)


def test_values_are_worded_with_their_radii():
    # 2s: one node at 2 a0; 3s: two at (9 -+ 3 sqrt 3)/2 = 1.90, 7.10 a0 (closed forms above)
    fig, marks = radial_figure([parse_state("1s"), parse_state("2s"), parse_state("3s")])
    texts = "\n".join(t.get_text() for t in fig.texts)
    assert "no radial node" in texts
    assert "node at r = 2.00 $a_0$" in texts
    assert "nodes at r = 1.90, 7.10 $a_0$" in texts
    assert "nodes: " not in texts


def test_each_mark_only_in_its_own_panel():
    # nodes in the R panel, the most probable radius (4 a0 for 2p, n^2/Z) in the density panel,
    # the radius holding F in the cumulative panel
    fig, marks = radial_figure([parse_state("3s"), parse_state("2pz")])
    r_panel, d_panel, c_panel = fig.axes
    nodes = [r for m in marks for r in m.node_radii_a0]
    peaks = [m.most_probable_a0 for m in marks]
    holds = [m.holding_a0 for m in marks]
    assert peaks[1] == pytest.approx(4.0, rel=1e-8)
    for ax, own in ((r_panel, nodes), (d_panel, peaks), (c_panel, holds)):
        assert sorted(_vertical_lines(ax)) == pytest.approx(sorted(own), rel=1e-12)
    # one quantity shown: every mark in that panel
    fig, marks = radial_figure([parse_state("3s")], ["density"])
    assert len(_vertical_lines(fig.axes[0])) == 2 + 1 + 1


def test_title_states_Z_and_the_nucleus():
    fig, _ = radial_figure([parse_state("2s")])
    assert fig._suptitle.get_text() == "Radial functions of 2s"
    fig, _ = radial_figure([eigenstate(2, 0, 0, Z=2.0, label="2s")])
    assert fig._suptitle.get_text() == "Radial functions of 2s, Z = 2"
    positronium = eigenstate(1, 0, 0, reduced_mass_ratio=0.5, label="1s")  # mu = m_e / 2
    fig, _ = radial_figure([positronium])
    assert "0.5 $m_e$ (positronium)" in fig._suptitle.get_text()


def test_text_size_scales_the_title():
    small, _ = radial_figure([parse_state("2s")], text_size_pt=8)
    large, _ = radial_figure([parse_state("2s")], text_size_pt=20)
    assert small._suptitle.get_fontsize() == 8 and large._suptitle.get_fontsize() == 20
    with pytest.raises(ValueError, match="text size"):
        radial_figure([parse_state("2s")], text_size_pt=0.5)
