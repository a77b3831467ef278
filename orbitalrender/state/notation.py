"""The STATE notation: text such as ``3,2,-1``, ``3dz2`` or ``1s@(0,0,-0.7) - 1s@(0,0,0.7)``.

Grammar (spaces are ignored)::

    state    := ['+'|'-'] term (('+'|'-') term)*
    term     := [coef '*'] orbital ['@' '(' x ',' y ',' z ')']
    coef     := number | number 'i' | 'i' | '(' complex ')'      e.g. 0.6, 0.8i, (0.6+0.8i)
    orbital  := n ',' l ',' m            complex eigenstate |n l m>
              | '(' n ',' l ',' m ')'    the same, bracketed
              | 'real(' n ',' l ',' m ')' real orbital of index m (cos for m > 0, sin for m < 0)
              | label                    1s, 2pz, 3dxy, 3dx2-y2, 4fz3, 4fxyz, ... (also 2p_z, 3d_z2)
              | [n] hybrid '[' k ']'     member k of sp, sp2, sp3, sp3d, sp3d2 (state/hybrid.py)

A hybrid SET label alone (``sp3``, ``3sp3d2``) stands for all its members: read it with
:func:`parse_states`; :func:`parse_state` and a superposition refuse it.

``j`` may stand for ``i``.  Centres are in a0.  The real labels map to
real-orbital indices m as follows (the usual Cartesian labelling)::

    p:  x -> +1,  y -> -1,  z -> 0
    d:  z2 -> 0,  xz -> +1,  yz -> -1,  x2-y2 -> +2,  xy -> -2
    f:  z3 -> 0,  xz2 -> +1, yz2 -> -1, z(x2-y2) -> +2, xyz -> -2,
        x(x2-3y2) -> +3,  y(3x2-y2) -> -3
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from .hybrid import HYBRID_SETS, hybrid_member, hybrid_members, parse_hybrid
from .limits import check_z
from .model import State, eigenstate, real_orbital, superpose

__all__ = ["REAL_LABELS", "hybrid_set_size", "parse_state", "parse_states", "pretty_label",
           "conditions_label", "StateSyntaxError"]

_SHELL_L = {"s": 0, "p": 1, "d": 2, "f": 3}

#: Cartesian suffix -> (l, m) of the real orbital.
REAL_LABELS: dict[str, tuple[int, int]] = {
    "s": (0, 0),
    "px": (1, 1), "py": (1, -1), "pz": (1, 0),
    "dz2": (2, 0), "dxz": (2, 1), "dyz": (2, -1), "dx2-y2": (2, 2), "dxy": (2, -2),
    "fz3": (3, 0), "fxz2": (3, 1), "fyz2": (3, -1), "fz(x2-y2)": (3, 2), "fxyz": (3, -2),
    "fx(x2-3y2)": (3, 3), "fy(3x2-y2)": (3, -3),
}
# Longest first, so that "dx2-y2" wins over a shorter prefix.
_LABEL_KEYS = sorted(REAL_LABELS, key=len, reverse=True)


class StateSyntaxError(ValueError):
    """A STATE string that does not follow the notation."""


@dataclass
class _Cursor:
    text: str
    pos: int = 0

    def peek(self, k: int = 1) -> str:
        return self.text[self.pos:self.pos + k]

    def take(self, literal: str) -> bool:
        if self.text.startswith(literal, self.pos):
            self.pos += len(literal)
            return True
        return False

    def expect(self, literal: str) -> None:
        if not self.take(literal):
            self.fail(f"expected {literal!r}")

    def fail(self, what: str):
        shown = self.text[self.pos:self.pos + 12] or "end of text"
        raise StateSyntaxError(f"STATE {self.text!r}: {what} at position {self.pos + 1} ({shown!r})")

    def match(self, pattern: re.Pattern) -> str | None:
        mt = pattern.match(self.text, self.pos)
        if mt is None:
            return None
        self.pos = mt.end()
        return mt.group(0)


_INT = re.compile(r"[+-]?\d+")
_NUM = re.compile(r"[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?")
_COMPLEX_BODY = re.compile(r"[^()]*")


def _integer(cur: _Cursor, what: str) -> int:
    tok = cur.match(_INT)
    if tok is None:
        cur.fail(f"expected an integer {what}")
    return int(tok)


def _number(cur: _Cursor, what: str) -> float:
    tok = cur.match(_NUM)
    if tok is None:
        cur.fail(f"expected a number for {what}")
    return float(tok)


def _triple(cur: _Cursor) -> tuple[int, int, int]:
    n = _integer(cur, "n")
    cur.expect(",")
    l = _integer(cur, "l")
    cur.expect(",")
    m = _integer(cur, "m")
    return n, l, m


def _coefficient(cur: _Cursor) -> complex | None:
    """A coefficient followed by '*', or None (the cursor is left where it was)."""
    start = cur.pos
    value: complex | None = None
    if cur.peek() == "(":
        close = cur.text.find(")", cur.pos)
        body = cur.text[cur.pos + 1:close] if close > 0 else ""
        if close > 0 and "," not in body:
            try:
                value = complex(body.replace("i", "j"))
            except ValueError:
                cur.fail(f"cannot read {body!r} as a complex coefficient")
            cur.pos = close + 1
    elif cur.peek() in ("i", "j") and cur.text[cur.pos + 1:cur.pos + 2] == "*":
        cur.pos += 1
        value = 1j
    else:
        tok = cur.match(_NUM)
        if tok is not None:
            value = float(tok)
            if cur.peek() in ("i", "j"):
                cur.pos += 1
                value = 1j * value
    if value is not None and cur.take("*"):
        return value
    cur.pos = start
    return None


_HYBRID_TOKEN = re.compile(r"(\d+)?sp[0-9a-z]*(\[\d+\])?")


def _set_refusal(name: str) -> str:
    size = HYBRID_SETS[name].size
    return (f"{name} is a set of {size} hybrid orbitals; pick one member, {name}[1] to "
            f"{name}[{size}]")


def _hybrid(cur: _Cursor, Z: float, mu: float) -> State | None:
    """A hybrid member at the cursor, or None (the cursor is left where it was)."""
    start = cur.pos
    token = cur.match(_HYBRID_TOKEN)
    if token is None:
        return None
    try:
        name, n, k = parse_hybrid(token)
        if k is None:
            raise ValueError(_set_refusal(name))
        return hybrid_member(name, k, n, Z=Z, reduced_mass_ratio=mu)
    except ValueError as exc:
        cur.pos = start
        cur.fail(str(exc))
    raise AssertionError  # pragma: no cover  (fail always raises)


def _orbital(cur: _Cursor, Z: float, mu: float) -> State:
    hybrid = _hybrid(cur, Z, mu)
    if hybrid is not None:
        return hybrid
    if cur.take("real("):
        n, l, m = _triple(cur)
        cur.expect(")")
        return real_orbital(n, l, m, Z, mu, label=f"real({n},{l},{m})")
    if cur.peek() == "(":
        cur.pos += 1
        n, l, m = _triple(cur)
        cur.expect(")")
        return eigenstate(n, l, m, Z, mu)
    n = _integer(cur, "n")
    if cur.take(","):
        l = _integer(cur, "l")
        cur.expect(",")
        m = _integer(cur, "m")
        return eigenstate(n, l, m, Z, mu)
    shell = cur.peek()
    if shell not in _SHELL_L:
        cur.fail("expected ',l,m' or an orbital letter s, p, d or f")
    cur.pos += 1
    cur.take("_")
    rest = cur.text[cur.pos:]
    for key in _LABEL_KEYS:
        suffix = key[1:]
        if key[0] == shell and rest.startswith(suffix):
            cur.pos += len(suffix)
            l, m = REAL_LABELS[key]
            if l >= n:
                cur.fail(f"{n}{shell} does not exist: l = {l} needs n > {l}")
            return real_orbital(n, l, m, Z, mu, label=f"{n}{key}")
    cur.fail(f"unknown {shell} orbital label; known: "
             + ", ".join(k for k in REAL_LABELS if k[0] == shell))
    raise AssertionError  # pragma: no cover  (fail always raises)


def _centre(cur: _Cursor) -> tuple[float, float, float] | None:
    if not cur.take("@"):
        return None
    cur.expect("(")
    x = _number(cur, "x")
    cur.expect(",")
    y = _number(cur, "y")
    cur.expect(",")
    z = _number(cur, "z")
    cur.expect(")")
    return (x, y, z)


def _moved(state: State, centre: tuple[float, float, float]) -> State:
    from dataclasses import replace
    return replace(state, terms=tuple(replace(t, centre_a0=centre) for t in state.terms))


def parse_state(text: str, Z: float = 1.0, reduced_mass_ratio: float = 1.0,
                time_au: float = 0.0) -> State:
    """Read a STATE string into a normalised :class:`State`.

    Parameters
    ----------
    text : str
        See the module docstring for the notation.
    Z : float
        Nuclear charge for every term.
    reduced_mass_ratio : float
        mu / m_e.
    time_au : float
        Evaluation time in atomic units.

    Raises
    ------
    StateSyntaxError
        For text that does not follow the notation.
    ValueError
        For impossible quantum numbers, Z <= 0 or a zero-norm superposition.

    Examples
    --------
    >>> parse_state("3,2,-1").terms[0].m
    -1
    >>> parse_state("3dz2").label
    '3dz2'
    >>> s = parse_state("1s@(0,0,-0.7) + 1s@(0,0,0.7)")
    >>> len(s.terms), s.is_single_centre
    (2, False)
    """
    if not isinstance(text, str):
        raise StateSyntaxError(f"STATE must be text, got {type(text).__name__}")
    compact = re.sub(r"\s+", "", text)
    if not compact:
        raise StateSyntaxError("STATE is empty")
    check_z(Z)
    cur = _Cursor(compact)
    parts: list[tuple[complex, State]] = []
    sign = -1.0 if cur.take("-") else 1.0
    if sign > 0:
        cur.take("+")
    while True:
        coef = _coefficient(cur)
        orb = _orbital(cur, Z, reduced_mass_ratio)
        centre = _centre(cur)
        if centre is not None:
            orb = _moved(orb, centre)
        parts.append((sign * (1.0 if coef is None else coef), orb))
        if cur.pos == len(compact):
            break
        if cur.take("+"):
            sign = 1.0
        elif cur.take("-"):
            sign = -1.0
        else:
            cur.fail("expected '+', '-' or the end")
    if len(parts) == 1 and parts[0][0] == 1.0 and time_au == 0.0:
        return parts[0][1]
    label = text.strip() if len(parts) > 1 else parts[0][1].label
    return superpose(parts, time_au=time_au, label=label)


def parse_states(text: str, Z: float = 1.0, reduced_mass_ratio: float = 1.0,
                 time_au: float = 0.0) -> tuple[State, ...]:
    """Every state a STATE text stands for: the members of a hybrid set label such as
    ``sp3`` (drawn together, one surface each), else the one state of :func:`parse_state`.

    Examples
    --------
    >>> [s.label for s in parse_states("sp")], [s.label for s in parse_states("2pz")]
    (['sp[1]', 'sp[2]'], ['2pz'])
    """
    hybrid = parse_hybrid(text) if isinstance(text, str) else None
    if hybrid is not None and hybrid[2] is None:
        if Z <= 0:
            raise ValueError(f"Z must be positive, got {Z}")
        members = hybrid_members(hybrid[0], hybrid[1], Z=Z, reduced_mass_ratio=reduced_mass_ratio)
        return tuple(m.at_time(time_au) for m in members)
    return (parse_state(text, Z, reduced_mass_ratio, time_au),)


def hybrid_set_size(text: str) -> int | None:
    """The number of members if `text` is a hybrid set label (``sp3``), else None.

    Examples
    --------
    >>> hybrid_set_size("sp3d"), hybrid_set_size("sp3d[1]"), hybrid_set_size("1s")
    (5, None, None)
    """
    try:
        hybrid = parse_hybrid(text)
    except ValueError:
        return None
    return HYBRID_SETS[hybrid[0]].size if hybrid is not None and hybrid[2] is None else None


_HYBRID_NAME = re.compile(r"^(\d*)sp(\d?)(d?)(\d?)(\[\d+\])?$")
_REAL_LABEL = re.compile(r"^(\d+)([spdf])(.*)$")
_EIGEN_LABEL = re.compile(r"^(\d+),(\d+),(-?\d+)$")


def pretty_label(label: str) -> str:
    """A state label as typeset text (matplotlib mathtext): the Cartesian part of a real
    orbital as a subscript with powers raised, |n l m> for an eigenstate; others unchanged.

    Examples
    --------
    >>> pretty_label("3dx2-y2"), pretty_label("2pz"), pretty_label("3,2,-1")
    ('3d$_{x^{2}-y^{2}}$', '2p$_{z}$', '$|3, 2, -1\\\\rangle$')
    >>> pretty_label("sp3[2]"), pretty_label("3sp3d2")
    ('sp$^{3}$[2]', '3sp$^{3}$d$^{2}$')
    >>> pretty_label("1s"), pretty_label("1s@(0,0,-0.7) - 1s@(0,0,0.7)")
    ('1s', '1s@(0,0,-0.7) - 1s@(0,0,0.7)')
    """
    mt = _HYBRID_NAME.match(label)
    if mt:
        powers = "".join(f"{letter}$^{{{power}}}$" if power else letter
                         for letter, power in (("p", mt[2]), (mt[3], mt[4])) if letter)
        return f"{mt[1]}s{powers}{mt[5] or ''}"
    mt = _REAL_LABEL.match(label)
    if mt and mt[2] + mt[3] in REAL_LABELS and mt[3]:
        sub = re.sub(r"(\d)", r"^{\1}", mt[3])
        return f"{mt[1]}{mt[2]}$_{{{sub}}}$"
    mt = _EIGEN_LABEL.match(label)
    if mt:
        return rf"$|{mt[1]}, {mt[2]}, {mt[3]}\rangle$"
    return label


#: Two reduced masses closer than this (relative) are taken for the same nucleus preset.
_SAME_MASS = 1e-12


def conditions_label(Z: float = 1.0, reduced_mass_ratio: float = 1.0) -> str:
    """What a title must add when the atom is not the default one (Z = 1, infinite nuclear
    mass): ``Z = 2`` and the reduced mass mu / m_e (with the preset's name when it is one),
    as typeset text; the empty string for the defaults.

    Examples
    --------
    >>> conditions_label(1.0, 1.0)
    ''
    >>> conditions_label(2.0, 1.0)
    'Z = 2'
    >>> conditions_label(1.0, 0.5)
    '$\\\\mu$ = 0.5 $m_e$ (positronium)'
    """
    from .units import NUCLEUS_PRESETS
    from .units import reduced_mass_ratio as ratio_of

    parts = [] if Z == 1 else [f"Z = {Z:g}"]
    if reduced_mass_ratio != 1:
        names = [name for name, masses in NUCLEUS_PRESETS.items()
                 if abs(ratio_of(*masses) - reduced_mass_ratio) <= _SAME_MASS * reduced_mass_ratio]
        named = f" ({names[0]})" if names else ""
        parts.append(rf"$\mu$ = {reduced_mass_ratio:.6g} $m_e${named}")
    return ", ".join(parts)
