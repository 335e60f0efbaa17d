"""Reactions into first-order steps, each with its reacting species and partners in excess.

The order of each step is the one the unit of its rate constant implies.

A reaction line gives one step (two for a reversible line).  Each step consumes
one reacting species; every other species on its side must be held in excess,
and the unit of the constant must be 1/time times concentration^-n for ``n``
molecules of partners in excess (a pseudo-first-order step).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from fractions import Fraction

from ..rate_constants import RateConstant
from ..scheme import Reaction, Step
from ..units import describe_dimension, parse_unit
from .messages import Diagnostics
from .reactions import ConstantRef, ReactionStatement, Term

__all__ = ["StepBuilder"]

_ORDINALS = {0: "first", 1: "second", 2: "third", 3: "fourth"}


class StepBuilder:
    """Turns reaction statements into reactions and steps, with the errors in ``found``.

    It makes :class:`~kinetics.scheme.Reaction` and :class:`~kinetics.scheme.Step` objects.

    Parameters
    ----------
    found : Diagnostics
        Where errors go.
    excess : frozenset of str
        The species declared in excess.
    excess_dims : Mapping
        Species in excess -> dimension of its value (see
        :class:`~kinetics.language.names.ExcessDeclarations`).
    excess_si : Mapping
        Species in excess -> its value in SI units (None while unknown).
    constants : Mapping of str to RateConstant
        The resolved constants.

    Examples
    --------
    >>> from fractions import Fraction
    >>> from kinetics.language.reader import read_statements
    >>> from kinetics.scheme import RateConstant
    >>> parsed = read_statements("A + W -> B  k1", "t")
    >>> k1 = RateConstant("k1", "1 M-1 s-1", Fraction(1, 1000), "M-1 s-1", 1, None, 1)
    >>> dims = {"W": {"[length]": -3, "[substance]": 1}}
    >>> builder = StepBuilder(Diagnostics("t"), frozenset({"W"}), dims, {"W": 55}, {"k1": k1})
    >>> reactions, steps = builder.build(parsed.reactions)
    >>> steps[0].reactant, steps[0].co_reactants
    ('A', ((1.0, 'W'),))
    """

    def __init__(
        self,
        found: Diagnostics,
        excess: frozenset[str],
        excess_dims: Mapping[str, Mapping[str, Fraction]],
        excess_si: Mapping[str, object],
        constants: Mapping[str, RateConstant],
    ) -> None:
        self.found = found
        self.excess = excess
        self.excess_dims = excess_dims
        self.excess_si = excess_si
        self.constants = constants
        # (order, unit, co-reactants) found consistent: checked once per file
        self._orders_ok: set[tuple[int, str, tuple[tuple[float, str], ...]]] = set()

    def build(self, reactions: Sequence[ReactionStatement]) -> tuple[list[Reaction], list[Step]]:
        """The reactions of the file and their steps (a step with an error is left out)."""
        reaction_objs: list[Reaction] = []
        steps: list[Step] = []
        for index, r in enumerate(reactions):
            left_pairs = tuple([(t.coefficient, t.name) for t in r.left])
            right_pairs = tuple([(t.coefficient, t.name) for t in r.right])
            names = tuple([ref.name for ref in r.constants])
            reaction_objs.append(
                Reaction(left_pairs, right_pairs, r.reversible, names, r.line.number, r.line.text)
            )
            forward = self._reacting(r, "left", r.left)
            reverse = self._reacting(r, "right", r.right) if r.reversible else None
            if forward is None or (r.reversible and reverse is None):
                continue
            directions = [("forward", forward, right_pairs, r.constants[0])]
            if reverse is not None:
                directions.append(("reverse", reverse, left_pairs, r.constants[1]))
            for direction, (mover, partners), products, ref in directions:
                step = self._step(r, ref, mover, partners, products)
                if step is not None:
                    steps.append(Step(*step, index, direction))
        return reaction_objs, steps

    def _step(
        self,
        r: ReactionStatement,
        ref: ConstantRef,
        mover: Term,
        partners: list[Term],
        products: tuple[tuple[float, str], ...],
    ) -> tuple[str, tuple[tuple[float, str], ...], str, tuple[tuple[float, str], ...]] | None:
        """(reactant, products, constant, co-reactants) of one direction, or None."""
        constant = self.constants.get(ref.name)
        if constant is None:
            return None
        self._check_order(r, ref, constant, mover, partners)
        if not partners and len(products) == 1 and products[0] == (1.0, mover.name):
            self.found.error(
                r.line,
                f"this step turns {mover.name} into {mover.name}: it changes nothing",
                mover.column,
                mover.name,
                "remove the line, or write the product the step forms",
            )
            return None
        co_reactants = tuple([(t.coefficient, t.name) for t in partners])
        return mover.name, products, ref.name, co_reactants

    def _reacting(
        self, r: ReactionStatement, side: str, terms: tuple[Term, ...]
    ) -> tuple[Term, list[Term]] | None:
        """The one reacting species of a side and its excess partners, or None (reported)."""
        if len(terms) == 1 and terms[0].name not in self.excess:
            mover = terms[0]  # the common case: one species, no co-reactant
            partners: list[Term] = []
        else:
            movers = [t for t in terms if t.name not in self.excess]
            partners = [t for t in terms if t.name in self.excess]
            if len(movers) > 1 and len({t.name for t in movers}) == 1:
                # A + A -> ...: one species written twice
                total = sum(t.coefficient for t in movers)
                movers = [Term(total, movers[0].name, movers[0].column)]
            if len(movers) != 1:
                self._order_error(r, side, movers)
                return None
            mover = movers[0]
        if mover.coefficient != 1:
            self.found.error(
                r.line,
                f"{mover.name} has the coefficient {mover.coefficient:g} on the "
                f"{side} of a first-order step",
                mover.column,
                mover.name,
                "a first-order step consumes one molecule of its reactant; scale the "
                "products instead",
            )
            return None
        return mover, partners

    def _order_error(self, r: ReactionStatement, side: str, movers: list[Term]) -> None:
        """No reacting species on a side, or several: not a first-order step."""
        if not movers:
            terms = r.left if side == "left" else r.right
            self.found.error(
                r.line,
                f"every species on the {side} of this step is held in excess, so nothing is "
                "consumed",
                terms[0].column,
                terms[0].name,
                "a first-order step needs one reacting species that is not declared 'excess'",
            )
            return
        names = " and ".join(t.name for t in movers)
        second = movers[1]
        self.found.error(
            r.line,
            f"{names} react together on the {side} of this step: that is a second- or "
            "higher-order step, and this tool solves first-order schemes",
            second.column,
            second.name,
            f"if {second.name} is present in large excess, declare it: "
            f"excess {second.name} = 1.0 mol/L (pseudo-first-order)",
        )

    def _check_order(
        self,
        r: ReactionStatement,
        ref: ConstantRef,
        constant: RateConstant,
        mover: Term,
        partners: list[Term],
    ) -> None:
        """The order the constant's unit implies must match the partners in excess."""
        if not partners and constant.order == 0:
            return  # the common case: a first-order constant on a first-order step
        key = (constant.order, constant.unit, tuple([(t.coefficient, t.name) for t in partners]))
        if key in self._orders_ok:
            return  # the same constant order, unit and co-reactants were fine before
        needed = sum((Fraction(t.coefficient) for t in partners), Fraction(0))
        if constant.order != needed:
            self._order_mismatch(r, ref, constant, mover, partners, needed)
            return
        self._orders_ok.add(key)
        if partners and all(t.name in self.excess_si for t in partners):
            total = self._product_dims(constant, partners)
            if total != {"[time]": -1}:
                self._orders_ok.discard(key)
                self.found.error(
                    r.line,
                    f"{constant.name} ({constant.unit}) times the excess concentration of "
                    + " and ".join(t.name for t in partners)
                    + f" does not give 1/time but {describe_dimension(total)}",
                    ref.column,
                    ref.name,
                    "use concentration units for both (e.g. M-1 s-1 with mol/L)",
                )

    def _product_dims(self, constant: RateConstant, partners: list[Term]) -> dict[str, Fraction]:
        """Dimension of k times the excess concentrations (must cancel to 1/time)."""
        total = dict(parse_unit(constant.unit).dims)
        for t in partners:
            dims = self.excess_dims.get(t.name)
            if dims is None:
                continue
            for k, v in dims.items():
                total[k] = total.get(k, 0) + v * Fraction(t.coefficient)
        return {k: v for k, v in total.items() if v}

    def _order_mismatch(
        self,
        r: ReactionStatement,
        ref: ConstantRef,
        constant: RateConstant,
        mover: Term,
        partners: list[Term],
        needed: Fraction,
    ) -> None:
        implied = _ORDINALS.get(constant.order, f"order-{constant.order + 1}")
        name = constant.name
        if needed == 0:
            problem = (
                f"the units of {name} ({constant.unit}) imply a {implied}-order step, but "
                f"{mover.name} reacts alone here (a first-order step needs 1/time)"
            )
            hint = (
                f"if a co-reactant is present in large excess, write it on the left "
                f"({mover.name} + W -> ...) and declare it: excess W = 55 mol/L; otherwise "
                f"give {name} in 1/s"
            )
        else:
            partner_names = " and ".join(t.name for t in partners)
            power = f"{int(needed)}" if needed.denominator == 1 else f"{float(needed):g}"
            problem = (
                f"the units of {name} ({constant.unit}) imply a {implied}-order step, but "
                f"{mover.name} reacts here with {partner_names} held in excess (a "
                f"pseudo-first-order step needs concentration^-{power}/time)"
            )
            example = "M-1 s-1" if power == "1" else f"M-{power} s-1"
            hint = f"give {name} in {example}: multiplied by the excess concentration it gives 1/s"
        self.found.error(r.line, problem, ref.column, ref.name, hint)
