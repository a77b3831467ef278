"""The STATE notation: text such as ``3,2,-1``, ``3dz2`` or ``1s@(0,0,-0.7) - 1s@(0,0,0.7)``.

Grammar (spaces are ignored)::

    state    := ['+'|'-'] term (('+'|'-') term)*
    term     := [coef '*'] orbital ['@' '(' x ',' y ',' z ')']
    coef     := number | number 'i' | 'i' | '(' complex ')'      e.g. 0.6, 0.8i, (0.6+0.8i)
    orbital  := n ',' l ',' m            complex eigenstate |n l m>
              | '(' n ',' l ',' m ')'    the same, bracketed
              | 'real(' n ',' l ',' m ')' real orbital of index m (cos for m > 0, sin for m < 0)
              | label                    1s, 2pz, 3dxy, 3dx2-y2, 4fz3, 4fxyz, ... (also 2p_z, 3d_z2)

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

from .limits import check_z
from .model import State, eigenstate, real_orbital, superpose

__all__ = ["REAL_LABELS", "parse_state", "pretty_label", "StateSyntaxError"]

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


def _orbital(cur: _Cursor, Z: float, mu: float) -> State:
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


_REAL_LABEL = re.compile(r"^(\d+)([spdf])(.*)$")
_EIGEN_LABEL = re.compile(r"^(\d+),(\d+),(-?\d+)$")


def pretty_label(label: str) -> str:
    """A state label as typeset text (matplotlib mathtext): the Cartesian part of a real
    orbital as a subscript with powers raised, |n l m> for an eigenstate; others unchanged.

    Examples
    --------
    >>> pretty_label("3dx2-y2"), pretty_label("2pz"), pretty_label("3,2,-1")
    ('3d$_{x^{2}-y^{2}}$', '2p$_{z}$', '$|3, 2, -1\\\\rangle$')
    >>> pretty_label("1s"), pretty_label("1s@(0,0,-0.7) - 1s@(0,0,0.7)")
    ('1s', '1s@(0,0,-0.7) - 1s@(0,0,0.7)')
    """
    mt = _REAL_LABEL.match(label)
    if mt and mt[2] + mt[3] in REAL_LABELS and mt[3]:
        sub = re.sub(r"(\d)", r"^{\1}", mt[3])
        return f"{mt[1]}{mt[2]}$_{{{sub}}}$"
    mt = _EIGEN_LABEL.match(label)
    if mt:
        return rf"$|{mt[1]}, {mt[2]}, {mt[3]}\rangle$"
    return label
