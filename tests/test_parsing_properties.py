"""Property tests of the scheme language.

1. Random valid schemes (names, coefficients, shared and own-line constants,
   reversible steps, start values, excess co-reactants, noise in spacing and
   comments) are written as text and parsed back; the scheme must be the one
   the generator built: species order, constants, steps, initial values and the
   rate matrix, which the test assembles itself from the definition
   dK/dt: K[r, r] -= k, K[p, r] += nu k (common practice, no source).
2. Random text and random mutations of valid lines never raise anything but
   our own error type.
3. The fast reader of plain reaction lines returns exactly what the general
   reader returns.
"""

from __future__ import annotations

import string
from dataclasses import dataclass, field
from fractions import Fraction

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from kinetics import KineticsError, parse
from kinetics.balance import mass_balance
from kinetics.language.reactions import ReactionStatement
from kinetics.language.reactions import fast_reaction as _fast_reaction
from kinetics.language.source import Line as _Line
from kinetics.network import summarise_network

SETTINGS = settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])

# Unit factors to SI from the SI brochure (9th ed., 2019): 1 min = 60 s, 1 h = 3600 s,
# 1 d = 86400 s, 1 L = 1e-3 m^3; M = mol/L.
FIRST_ORDER_UNITS = {
    "1/s": Fraction(1),
    "s-1": Fraction(1),
    "s⁻¹": Fraction(1),
    "1/min": Fraction(1, 60),
    "min-1": Fraction(1, 60),
    "h-1": Fraction(1, 3600),
    "d-1": Fraction(1, 86400),
}
SECOND_ORDER_UNITS = {  # in (mol/L)^-1 s^-1, i.e. per unit of the scheme's mol/L values
    "M-1 s-1": Fraction(1),
    "L mol-1 s-1": Fraction(1),
    "M-1 min-1": Fraction(1, 60),
}
CONCENTRATION_UNITS = {"mol/L": Fraction(1), "mmol/L": Fraction(1, 1000), "M": Fraction(1)}
RESERVED = {"start", "excess", "feed", "formula", "molar_mass", "temperature", "title"}
RESERVED |= {"balance", "arrhenius", "nan", "inf", "infinity", "volume"}

names = (
    st.text(string.ascii_letters, min_size=1, max_size=1)
    .flatmap(
        lambda first: st.text(string.ascii_letters + string.digits + "_'", max_size=5).map(
            lambda rest: first + rest
        )
    )
    .filter(lambda n: n.lower() not in RESERVED)
)
decimals = st.sampled_from(["1", "2", "0.5", "1.5", "3", "0.25", "2.0"])
values = st.one_of(
    st.integers(1, 999).map(str),
    st.tuples(st.integers(1, 9999), st.integers(-8, 3)).map(lambda t: f"{t[0]}e{t[1]}"),
    st.tuples(st.integers(0, 99), st.integers(1, 999)).map(lambda t: f"{t[0]}.{t[1]:03d}"),
).filter(lambda v: Fraction(v) > 0)


@dataclass
class Model:
    """What the generator means: the expected scheme, built without the parser."""

    lines: list[str] = field(default_factory=list)
    species: list[str] = field(default_factory=list)  # matrix order
    excess: dict[str, Fraction] = field(default_factory=dict)  # [mol/L]
    constants: dict[str, tuple[Fraction, int]] = field(default_factory=dict)  # SI, order
    steps: list[tuple[str, list[tuple[Fraction, str]], str, list[str]]] = field(
        default_factory=list
    )
    initial: dict[str, Fraction] = field(default_factory=dict)  # [concentration unit]
    unit: str = "mol/L"


def noise(draw) -> tuple[str, str]:
    """Random spacing and an optional trailing comment."""
    gap = draw(st.sampled_from([" ", "  ", "\t", "    "]))
    comment = draw(st.sampled_from(["", "", "  # note", "#x", " # k = 1 1/s -> B"]))
    return gap, comment


@st.composite
def schemes(draw) -> Model:
    model = Model()
    pool = draw(st.lists(names, min_size=2, max_size=9, unique=True))
    n_excess = draw(st.integers(0, min(2, len(pool) - 2)))
    excess_names, movers = pool[:n_excess], pool[n_excess:]
    excess_text = {w: draw(values) for w in excess_names}
    for w, text in excess_text.items():
        model.excess[w] = Fraction(text)
    shared: dict[int, list[str]] = {0: [], 1: []}  # constants by order, for sharing by name
    appearances: dict[str, list[str]] = {}  # reaction line -> its species, left to right
    line_steps: dict[str, list] = {}  # reaction line -> its steps, forward then reverse
    written_steps: set[tuple] = set()  # what each step does, with its constant
    counter = 0

    def new_constant(order: int) -> tuple[str, str]:
        nonlocal counter
        counter += 1
        name = f"k{counter}"
        units = FIRST_ORDER_UNITS if order == 0 else SECOND_ORDER_UNITS
        unit = draw(st.sampled_from(sorted(units)))
        value = draw(values)
        factor = units[unit] if order == 0 else units[unit] / 1000  # (mol/L)^-1 -> m^3/mol
        model.constants[name] = (Fraction(value) * factor, order)
        shared[order].append(name)
        return name, f"{name} = {value} {unit}"

    def constant_text(order: int) -> tuple[str, str]:
        how = draw(st.sampled_from(["inline", "inline", "shared", "own line"]))
        if how == "shared" and shared[order]:
            name = draw(st.sampled_from(shared[order]))
            return name, name
        name, definition = new_constant(order)
        if how == "own line":
            model.lines.append(definition)
            return name, name
        return name, definition

    for _ in range(draw(st.integers(1, 8))):
        reactant = draw(st.sampled_from(movers))
        partner = draw(st.sampled_from([None, *excess_names])) if excess_names else None
        arrow_kind = draw(st.sampled_from(["->", "→", "<=>", "⇌"]))
        reversible = arrow_kind in ("<=>", "⇌")
        if reversible:
            product = draw(st.sampled_from([m for m in movers if m != reactant] or [None]))
            if product is None:
                reversible, arrow_kind = False, "->"
        left = [(Fraction(1), reactant)] + ([(Fraction(1), partner)] if partner else [])
        if reversible:
            right = [(Fraction(1), product)]
        else:
            candidates = [m for m in pool if m != reactant]
            chosen = draw(st.lists(st.sampled_from(candidates), min_size=1, max_size=3))
            right = [(Fraction(draw(decimals)), n) for n in chosen]
        gap, comment = noise(draw)

        def side(terms):
            return " + ".join(
                n if c == 1 and draw(st.booleans()) else f"{c_text(c)} {n}" for c, n in terms
            )

        def c_text(c: Fraction) -> str:
            return str(int(c)) if c.denominator == 1 else str(float(c))

        order = 1 if partner else 0
        before = (len(model.lines), dict(model.constants), {o: list(v) for o, v in shared.items()})
        k_name, k_text = constant_text(order)
        constants_text = k_text
        names_used = [k_name]
        if reversible:
            kr_name, kr_text = constant_text(0)
            constants_text += ", " + kr_text
            names_used.append(kr_name)
        text = f"{side(left)} {arrow_kind} {side(right)}{gap}{constants_text}{comment}"
        if text in appearances:
            continue  # the very same line twice: keep the generator's bookkeeping simple
        keys = {step_key(reactant, right, partner, k_name)}
        if reversible:
            keys.add(step_key(product, left, None, names_used[1]))
        if keys & written_steps:  # a step repeated with its constant is refused (issue 12)
            del model.lines[before[0] :]  # forget the constants drawn for this line
            model.constants, shared = before[1], before[2]
            continue
        written_steps.update(keys)
        model.lines.append(text)
        appearances[text] = [n for _, n in left + right]
        line_steps[text] = [(reactant, right, k_name, [partner] if partner else [])]
        if reversible:
            line_steps[text].append((product, left, names_used[1], []))

    # start values in one concentration unit (some species only)
    model.unit = draw(st.sampled_from(sorted(CONCENTRATION_UNITS)))
    matrix_species = sorted(
        {n for names in appearances.values() for n in names} - set(excess_names)
    )
    started = draw(st.lists(st.sampled_from(matrix_species), unique=True, max_size=4))
    if started:
        items = []
        for name in started:
            value = draw(values)
            model.initial[name] = Fraction(value)
            items.append(f"{name} = {value} {model.unit}")
        model.lines.append("start " + ", ".join(items))
    else:
        model.unit = "mol/L"  # the default, or the unit of the first excess value
    used = {n for names in appearances.values() for n in names}
    model.excess = {w: v for w, v in model.excess.items() if w in used}
    if model.excess:
        model.lines.append(
            "excess " + ", ".join(f"{w} = {excess_text[w]} mol/L" for w in model.excess)
        )
    # shuffle the lines: the language does not depend on their order ...
    order = draw(st.permutations(range(len(model.lines))))
    model.lines = [model.lines[i] for i in order]
    # ... except for the species order: first appearance in the reactions as they now stand
    model.species = []
    model.steps = [step for line in model.lines for step in line_steps.get(line, [])]
    for line in model.lines:
        for name in appearances.get(line, []):
            if name not in excess_names and name not in model.species:
                model.species.append(name)
    return model


def step_key(reactant, terms, partner, constant) -> tuple:
    """A step as the parser compares steps: products merged by name, and its constant."""
    total: dict[str, Fraction] = {}
    for c, n in terms:
        total[n] = total.get(n, 0) + c
    return (reactant, partner, tuple(sorted(total.items())), constant)


def expected_rate_matrix(model: Model) -> np.ndarray:
    n = len(model.species)
    index = {s: i for i, s in enumerate(model.species)}
    K = np.zeros((n, n))
    for reactant, products, constant, partners in model.steps:
        k = model.constants[constant][0]
        for w in partners:  # k_eff = k [W] with [W] in mol/m^3 (SI)
            k = k * model.excess[w] * 1000
        rate = float(k)
        r = index[reactant]
        K[r, r] -= rate
        for nu, p in products:
            if p in index:
                K[index[p], r] += float(nu) * rate
    return K


@SETTINGS
@given(schemes())
def test_round_trip_of_random_valid_schemes(model):
    text = "\n".join(model.lines)
    scheme = parse(text, "generated.scheme")
    assert scheme.species_names == model.species, text
    assert {k: c.value_si for k, c in scheme.constants.items()} == {
        k: v for k, (v, _) in model.constants.items()
    }
    assert {k: c.order for k, c in scheme.constants.items()} == {
        k: o for k, (_, o) in model.constants.items()
    }
    # every step, in file order (a reversible reaction: forward, then reverse)
    assert [
        (s.reactant, s.products, s.constant, [n for _, n in s.co_reactants]) for s in scheme.steps
    ] == [
        (r, tuple((float(c), n) for c, n in products), k, partners)
        for r, products, k, partners in model.steps
    ]
    assert scheme.concentration_unit == model.unit
    assert scheme.initial == {k: float(v) for k, v in model.initial.items()}
    expected_c0 = [float(model.initial.get(s, 0)) for s in model.species]
    np.testing.assert_array_equal(scheme.initial_vector, expected_c0)
    per_unit = CONCENTRATION_UNITS[model.unit]  # mol/L per unit of the scheme
    assert scheme.excess == {k: float(v / per_unit) for k, v in model.excess.items()}
    K = expected_rate_matrix(model)
    # the same sums in another order: a few ulps apart at most
    np.testing.assert_allclose(scheme.rate_matrix(), K, rtol=1e-14, atol=1e-300)
    np.testing.assert_allclose(scheme.rate_matrix_sparse().toarray(), K, rtol=1e-14, atol=1e-300)


# ---------------------------------------------------------------------------
# robustness: nothing but our own errors

TOKENS = ["->", "<=>", "mol", "L", "s", "min", "M", "arrhenius(", "start ", "excess ", "feed "]
TOKENS += ["formula ", "molar_mass ", "temperature = ", "title:", "balance:", "nan", "inf"]
TOKENS += ["1e999", "\x00", "\r", "\n"]
ALPHABET = st.sampled_from([*"AB CWk=0123456789.e-+<>→⇌#,()/*^⁻¹_'\t:é", *TOKENS])
VALID_LINES = [
    "title: x",
    "A -> B + 2 C    k1 = 0.12 1/min",
    "B <=> D    kf = 2.0e-3 1/s, kr = 5.0e-4 1/s",
    "C + W -> E  k2 = 1.5e-4 M-1 s-1",
    "k3 = arrhenius(A = 1.0e13 1/s, Ea = 95 kJ/mol)",
    "E -> F k3",
    "temperature = 60 degC",
    "start A = 0.50 mol/L, B = 10 mmol/L",
    "excess W = 55 mol/L",
    "feed A = 0.01 mol/L/min",
    "formula A = C6H12O6, B = C6H12O6, C = H2O",
    "molar_mass F = 180.2 g/mol",
    "balance: lumped",
]


def exercise(text: str) -> None:
    try:
        scheme = parse(text, "fuzz.scheme")
    except KineticsError as exc:
        message = str(exc)  # formatting the message must not fail either
        assert message
        for error in getattr(exc, "errors", []):
            assert error.line >= 0
            assert error.column >= 0
        return
    scheme.rate_matrix()
    scheme.rate_matrix_sparse()
    mass_balance(scheme)
    summarise_network(scheme)


@SETTINGS
@given(st.text(max_size=200))
def test_random_text_raises_only_our_errors(text):
    exercise(text)


@SETTINGS
@given(st.lists(ALPHABET, max_size=60).map("".join))
def test_random_token_soup_raises_only_our_errors(text):
    exercise(text)


@st.composite
def mutated_schemes(draw) -> str:
    lines = list(VALID_LINES)
    for _ in range(draw(st.integers(1, 4))):
        i = draw(st.integers(0, len(lines) - 1))
        line = lines[i]
        op = draw(st.sampled_from(["delete", "insert", "replace", "cut", "duplicate"]))
        j = draw(st.integers(0, len(line)))
        if op == "delete" and line:
            j = min(j, len(line) - 1)
            line = line[:j] + line[j + 1 :]
        elif op == "insert":
            line = line[:j] + draw(ALPHABET) + line[j:]
        elif op == "replace" and line:
            j = min(j, len(line) - 1)
            line = line[:j] + draw(ALPHABET) + line[j + 1 :]
        elif op == "cut":
            k = draw(st.integers(j, len(line)))
            line = line[:j] + line[k:]
        else:
            lines.insert(i, line)
        lines[i] = line
    return "\n".join(lines)


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(mutated_schemes())
def test_mutated_valid_schemes_raise_only_our_errors(text):
    exercise(text)


@pytest.mark.parametrize(
    "text",
    [
        "A -> B  k1 = 1 min**-99999999",  # huge exponents must not hang the exact conversion
        "A -> B  k1 = 1 ((min^12)^12)^12",
        "A -> B  k1 = 1 2^99999",
        "A + 99999999 W -> B  k1 = 1 M-1 s-1\nexcess W = 2 M",
        "A -> B  k1 = 1 1/s\nstart A = 1 (",
        "A -> B  k1 = 1 1/s\nformula A = " + "(" * 500,
        "A -> B  k1 = arrhenius(A = 1e300 1/s, Ea = 0 J/mol)\ntemperature = 1e-300 K",
        "A -> B  k1 = arrhenius(A = 1 1/s, Ea = 1e308 kJ/mol)\ntemperature = 300 K",
        "\ufeff\x00\x0b",
    ],
)
def test_known_hard_inputs_raise_only_our_errors(text):
    exercise(text)


# ---------------------------------------------------------------------------
# fast reader == general reader

reaction_lines = st.builds(
    lambda left, arrow, right, gap, refs: f"{left}{arrow}{right}{gap}{refs}",
    st.sampled_from(["A", "A ", " A + W ", "2 A", "A+W", "start", "A'"]),
    st.sampled_from(["->", " -> ", "→", "<=>", " ⇌ ", "-->", "=>"]),
    st.sampled_from(["B", " B + 2 C", "0.5B+1.5 C_2", ".5 D", "B +", "0 B", "excess"]),
    st.sampled_from([" ", "  ", "\t", ""]),
    st.sampled_from(
        [
            "k1",
            "k1 = 0.1 1/s",
            "k1=2.0e-3 M-1 s-1",
            "kf = 1 1/s, kr = 2 1/s",
            "kf = 1 1/s,kr",
            "k1 = 1e999 1/s",
            "k1 = 0.1",
            "k1 = 1 1/(M s)",
            "k1 = -1 1/s",
            "k1 = 1. s-1",
            "k1 = .5 min-1 ",
            "k1 = 1 s->",
            "arrhenius = 1 1/s",
        ]
    ),
)


@settings(max_examples=200, deadline=None)
@given(reaction_lines)
def test_fast_reader_agrees_with_the_general_reader(code):
    line = _Line("x", 1, code, code)
    fast = _fast_reaction(line)
    if fast is not None:
        assert fast == ReactionStatement.from_line_general(line)


# ---------------------------------------------------------------------------
# issue 15: named quantities and expressions, written in any order, evaluated exactly

TIME_UNITS = {"s": Fraction(1), "min": Fraction(60), "h": Fraction(3600), "d": Fraction(86400)}


@st.composite
def expression_schemes(draw) -> tuple[list[str], dict[str, Fraction]]:
    """Lines defining times, rates derived from them by rational arithmetic, and a chain
    of steps using the rates; the exact value of every rate, computed here."""
    lines: list[str] = []
    times: dict[str, Fraction] = {}
    for i in range(draw(st.integers(1, 3))):
        number, unit = draw(st.integers(1, 500)), draw(st.sampled_from(sorted(TIME_UNITS)))
        times[f"t{i}"] = number * TIME_UNITS[unit]
        lines.append(f"t{i} = {number} {unit}")
    rates: dict[str, Fraction] = {}
    for i in range(draw(st.integers(1, 5))):
        name = f"k{i}"
        form = draw(st.sampled_from(["time", "scaled", "sum"] if rates else ["time"]))
        if form == "time":
            t = draw(st.sampled_from(sorted(times)))
            p, q = draw(st.integers(1, 9)), draw(st.integers(1, 9))
            rates[name] = Fraction(p, q) / times[t]
            text = f"{p} / {q} / {t}" if draw(st.booleans()) else f"({p} / {q}) * {t} ** -1"
        elif form == "scaled":
            other = draw(st.sampled_from(sorted(rates)))
            p = draw(st.integers(1, 20))
            rates[name] = rates[other] * p / 7
            text = f"{other} * {p} / 7"
        else:
            a, b = draw(st.sampled_from(sorted(rates))), draw(st.sampled_from(sorted(rates)))
            rates[name] = (rates[a] + rates[b]) / 2
            text = f"({a} + {b}) / 2"
        lines.append(f"{name} = {text}")
    for i, name in enumerate(rates):
        lines.append(f"S{i} -> S{i + 1}  {name}")
    lines.append("start S0 = 1 mol/L")
    order = draw(st.permutations(range(len(lines))))
    return [lines[i] for i in order], rates


@SETTINGS
@given(expression_schemes())
def test_expressions_in_any_order_give_the_exact_values(drawn):
    lines, rates = drawn
    scheme = parse("\n".join(lines), "generated.scheme")
    assert {n: scheme.constants[n].value_si for n in rates} == rates
    np.testing.assert_array_equal(scheme.rates, [float(rates[s.constant]) for s in scheme.steps])


EXPRESSION_LINES = [
    "t_p = 50 h",
    "lam = 0.88 * ln(2) / t_p",
    "k4 = lam / 3",
    "P -> Q  k4",
    "Q -> R  half_life = 6 h, fraction = 87.6 %",
    "kq = q10(0.05 1/d, 25 degC, 2.5)",
    "R -> S  kq",
    "ke = eyring(dH = 80 kJ/mol, dS = -20 J/mol/K)",
    "S -> U  ke",
    "start P = 10 GBq",
    "require Q <= 0.15 % of P",
    "temperature = 300 K",
]
EXPRESSION_TOKENS = ["ln(", "exp(", "sqrt(", "log10(", "**", "^", "%", "half_life", "fraction"]
EXPRESSION_TOKENS += ["require ", " <= ", " >= ", "GBq", "q10(", "eyring(", "t_p", "lam", " of "]
EXPRESSION_ALPHABET = st.sampled_from([*"Pkt_ =()*/+-%^,0123456789.", *EXPRESSION_TOKENS])


@st.composite
def mutated_expression_schemes(draw) -> str:
    lines = list(EXPRESSION_LINES)
    for _ in range(draw(st.integers(1, 4))):
        i = draw(st.integers(0, len(lines) - 1))
        line = lines[i]
        j = draw(st.integers(0, len(line)))
        op = draw(st.sampled_from(["delete", "insert", "cut"]))
        if op == "delete" and line:
            j = min(j, len(line) - 1)
            line = line[:j] + line[j + 1 :]
        elif op == "insert":
            line = line[:j] + draw(EXPRESSION_ALPHABET) + line[j:]
        else:
            line = line[:j] + line[draw(st.integers(j, len(line))) :]
        lines[i] = line
    return "\n".join(lines)


def test_the_valid_expression_lines_parse():
    scheme = parse("\n".join(EXPRESSION_LINES))
    assert scheme.driven_by("t_p") == ("lam", "k4")


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(mutated_expression_schemes())
def test_mutated_expression_schemes_raise_only_our_errors(text):
    exercise(text)


@SETTINGS
@given(st.lists(EXPRESSION_ALPHABET, max_size=40).map(lambda t: "k = " + "".join(t)))
def test_random_expressions_raise_only_our_errors(text):
    exercise(text + "\nA -> B  k\nstart A = 1 M")


expression_refs = st.sampled_from(
    [
        "k1 = 2 * k0",
        "k1 = k0 / 3",
        "k1 = 0.5 1/min + 1 1/h",
        "k1 = 1 s^-1",
        "half_life = 5 h",
        "half_life = 5 h, fraction = 20 %",
        "k1 = 2 1/s * 3",
        "k1 = 1e-3 M-1 s-1",
        "k1 = arrhenius(A = 1 1/s, Ea = 1 kJ/mol)",
    ]
)


@settings(max_examples=100, deadline=None)
@given(st.sampled_from(["A -> B  ", "A + W -> B ", "A <=> B  "]), expression_refs)
def test_fast_reader_agrees_with_the_general_reader_on_expressions(head, refs):
    code = head + refs
    line = _Line("x", 1, code, code)
    fast = _fast_reaction(line)
    if fast is not None:
        assert fast == ReactionStatement.from_line_general(line)
