"""The one "did you mean" rule of the package: the known name closest to a misspelt one.

Every message that proposes a name (a species in a data file, a constant in a
scheme, a parameter of a sweep, a statement keyword) asks :func:`close_matches`;
the wording of the proposal stays with the message.
"""

from __future__ import annotations

import difflib
from collections.abc import Iterable

__all__ = ["SIMILARITY_CUTOFF", "close_matches"]

#: Least similarity of a proposed name (:class:`difflib.SequenceMatcher` ratio, 0 to 1).
#: 0.6 is difflib's own default (common practice, no source).
SIMILARITY_CUTOFF = 0.6


def close_matches(
    name: str,
    candidates: Iterable[str],
    *,
    cutoff: float = SIMILARITY_CUTOFF,
    fold_case: bool = False,
) -> list[str]:
    """The known name closest to ``name``, as a list of at most one name.

    The result has the shape of :func:`difflib.get_close_matches` with ``n=1``:
    empty when no candidate is close enough.

    Parameters
    ----------
    name : str
        The name as the user wrote it.
    candidates : iterable of str
        The names that exist, in the order to prefer among equals.
    cutoff : float, optional
        Least similarity ratio of a proposal [1] (0 to 1).
    fold_case : bool, optional
        When True, a candidate that differs from ``name`` only in letter case is
        proposed first, however short the names are.

    Returns
    -------
    list of str
        ``[closest]`` or ``[]``.

    Notes
    -----
    The similarity is the Ratcliff/Obershelp ratio computed by
    :class:`difflib.SequenceMatcher`, :math:`2M/T` with :math:`M` matched
    characters out of :math:`T` in both names together.

    References
    ----------
    J. W. Ratcliff and D. E. Metzener, "Pattern Matching: the Gestalt Approach",
    Dr. Dobb's Journal, July 1988, p. 46.

    Examples
    --------
    >>> close_matches("k_1", ["k1", "k2", "kf"])
    ['k1']
    >>> close_matches("water", ["W"], fold_case=True)
    []
    >>> close_matches("w", ["W", "X"], fold_case=True)
    ['W']
    """
    known = list(candidates)
    if fold_case:
        folded = name.lower()
        same = [c for c in known if c.lower() == folded]
        if same:
            return same[:1]
    return difflib.get_close_matches(name, known, n=1, cutoff=cutoff)
