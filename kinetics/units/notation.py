"""Chemists' notation of units rewritten into the syntax pint reads.

Exponents after the unit with or without a sign (``s-1``, ``M-1 s-1``, ``m3``), caret and
double-star forms (``s^-1``), superscripts (``s⁻¹``), juxtaposition as multiplication
(``L mol-1 s-1``), ``µ``/``μ`` prefixes and ``°C`` for degC.
"""

from __future__ import annotations

import re

from ..errors import UnitError

__all__ = ["MAX_EXPONENT", "normalise_unit"]

_SUPERSCRIPTS = str.maketrans("⁰¹²³⁴⁵⁶⁷⁸⁹⁻⁺", "0123456789-+")
_PIECE = re.compile(r"\(|\)|/|\*|[^\s*/·⋅()]+")
_POWER = re.compile(r"^(?P<name>[^\W\d]+?)\^?(?P<exp>[-+]?\d+)$")
_BARE_POWER = re.compile(r"^\^?(?P<exp>[-+]?\d+)$")
_WORD = re.compile(r"^(?:[^\W\d]+|%|\d+)$")
_GLUED = re.compile(r"(?<=[^\W\d_])(\^?[-+]?\d+)(?=[^\W\d_])")

#: Largest exponent accepted in a unit (``s-1``, ``m3``, ``M-2`` ...).  Larger ones
#: are certainly typing mistakes, and exact rational powers of them cost time.
MAX_EXPONENT = 12


def normalise_unit(text: str) -> str:
    """Rewrite chemists' unit notation into a string pint parses.

    Parameters
    ----------
    text : str
        A unit as written in a scheme, e.g. ``"L mol-1 s-1"`` or ``"s⁻¹"``.

    Returns
    -------
    str
        The same unit in pint syntax, e.g. ``"L*mol**-1*s**-1"``.

    Raises
    ------
    ValueError
        For a piece that is neither a unit name (with an optional integer
        exponent), an integer, an operator nor a parenthesis, and for exponents
        beyond :data:`MAX_EXPONENT`.

    Examples
    --------
    >>> normalise_unit("M-1 s-1")
    'M**-1*s**-1'
    >>> normalise_unit("mol/L/min")
    'mol/L/min'
    >>> normalise_unit("s**-1")
    's**-1'
    """
    text = text.strip().translate(_SUPERSCRIPTS).replace("−", "-")
    text = text.replace("°C", "degC").replace("°F", "degF").replace("℃", "degC")
    text = text.replace("µ", "u").replace("μ", "u")
    text = re.sub(r"\s*(?:\*\*|\^)\s*", "^", text)
    text = _GLUED.sub(r"\1 ", text)  # M-1s-1 -> M-1 s-1
    out: list[str] = []
    previous_is_word = False
    for piece in _PIECE.findall(text):
        if piece in ("(", ")", "/", "*"):
            if piece == "(" and previous_is_word:
                out.append("*")
            out.append(piece)
            previous_is_word = piece == ")"
            continue
        bare = _BARE_POWER.match(piece)
        if bare and out and out[-1] == ")":
            out.append("**" + _exponent(bare["exp"]))
            previous_is_word = True
            continue
        match = _POWER.match(piece)
        if match:
            piece = f"{match['name']}**{_exponent(match['exp'])}"
        elif not _WORD.match(piece):
            raise UnitError(f"cannot read {piece!r} in a unit")
        if previous_is_word:
            out.append("*")
        out.append(piece)
        previous_is_word = True
    return "".join(out)


def _exponent(text: str) -> str:
    value = int(text)
    if abs(value) > MAX_EXPONENT:
        raise UnitError(f"the exponent {value} is too large")
    return str(value)
