"""Node voltages of random resistor / op-amp networks against an independent solution.

Each network's equations are written here from first principles (Kirchhoff's current
law at every node, each voltage source's constraint, each op-amp's input-output law),
solved exactly in rational arithmetic with sympy, and compared with lotwise's
node_voltage measurements and operating point. None of lotwise's stamping code is used.
"""

from __future__ import annotations

import random
from dataclasses import dataclass, field
from fractions import Fraction
from typing import Dict, List, Tuple

import numpy as np
import pytest

import lotwise

sympy = pytest.importorskip("sympy")

GROUND = "gnd"
E24 = [10, 11, 12, 13, 15, 16, 18, 20, 22, 24, 27, 30, 33, 36, 39, 43, 47, 51, 56, 62, 68, 75,
       82, 91]  # source: IEC 60063:2015, E24 series


@dataclass
class OpAmp:
    name: str
    plus: str
    minus: str
    output: str
    model: str
    open_loop_gain: Fraction
    offset: Fraction
    bias_plus: Fraction
    bias_minus: Fraction


@dataclass
class Network:
    nodes: List[str]
    resistors: List[Tuple[str, str, str, Fraction]] = field(default_factory=list)
    voltage_sources: List[Tuple[str, str, str, Fraction]] = field(default_factory=list)
    current_sources: List[Tuple[str, str, str, Fraction]] = field(default_factory=list)
    opamps: List[OpAmp] = field(default_factory=list)


def random_network(seed: int, model: str) -> Network:
    """A connected resistor network with sources and one or two op-amps."""
    rng = random.Random(seed)
    nodes = [f"n{i}" for i in range(rng.randint(4, 7))]
    net = Network(nodes)

    def resistor_value() -> Fraction:
        return Fraction(rng.choice(E24)) * 10 ** rng.randint(1, 4)

    # A spanning tree to ground gives every node a DC path; extra resistors close loops.
    for i, node in enumerate(nodes):
        net.resistors.append((f"RT{i}", node, rng.choice([GROUND] + nodes[:i]), resistor_value()))
    for j in range(rng.randint(2, 5)):
        a, b = rng.sample(nodes + [GROUND], 2)
        net.resistors.append((f"RX{j}", a, b, resistor_value()))
    driven = rng.sample(nodes, rng.randint(1, 2))  # nodes held by a source to ground
    for j, node in enumerate(driven):
        net.voltage_sources.append((f"V{j}", node, GROUND, Fraction(rng.randint(-5000, 5000), 1000)))
    for j in range(rng.randint(1, 2)):
        a, b = rng.sample(nodes + [GROUND], 2)
        net.current_sources.append((f"I{j}", a, b, Fraction(rng.randint(-1000, 1000), 10**6)))
    free = [n for n in nodes if n not in driven]
    outputs = rng.sample(free, min(len(free), rng.randint(1, 2)))
    for j, out in enumerate(outputs):
        minus = rng.choice([n for n in nodes if n != out])
        plus = rng.choice([n for n in nodes + [GROUND] if n != minus])
        # Negative feedback from the output to the inverting input.
        net.resistors.append((f"RF{j}", out, minus, resistor_value()))
        net.opamps.append(OpAmp(
            f"U{j}", plus, minus, out, model,
            open_loop_gain=Fraction(rng.choice([10**4, 10**5, 2 * 10**5])),
            offset=Fraction(rng.randint(-2000, 2000), 10**6),
            bias_plus=Fraction(rng.randint(0, 100), 10**9),
            bias_minus=Fraction(rng.randint(0, 100), 10**9),
        ))
    return net


def node_equations(net: Network):
    """Unknowns and equations from first principles, in exact rationals."""
    v = {n: sympy.Symbol(f"V_{n}") for n in net.nodes}
    volt = lambda n: sympy.Integer(0) if n == GROUND else v[n]  # noqa: E731
    source_current = {name: sympy.Symbol(f"J_{name}") for name, *_ in net.voltage_sources}
    output_current = {u.name: sympy.Symbol(f"I_{u.name}") for u in net.opamps}
    # Current leaving each node, summed; KCL sets each sum to zero.
    leaving = {n: sympy.Integer(0) for n in net.nodes}

    def leave(node: str, current) -> None:
        if node != GROUND:
            leaving[node] += current

    for _, a, b, r in net.resistors:
        i = (volt(a) - volt(b)) / sympy.Rational(r.numerator, r.denominator)
        leave(a, i)
        leave(b, -i)
    for name, a, b, value in net.current_sources:  # value flows out of a, into b
        i = sympy.Rational(value.numerator, value.denominator)
        leave(a, i)
        leave(b, -i)
    equations = []
    for name, plus, minus, value in net.voltage_sources:  # J flows plus -> minus inside
        leave(plus, source_current[name])
        leave(minus, -source_current[name])
        equations.append(sympy.Eq(volt(plus) - volt(minus), sympy.Rational(value.numerator, value.denominator)))
    for u in net.opamps:
        q = lambda f: sympy.Rational(f.numerator, f.denominator)  # noqa: E731
        leave(u.output, -output_current[u.name])  # the output drives current into its node
        leave(u.plus, q(u.bias_plus))  # bias currents are drawn out of the inputs
        leave(u.minus, q(u.bias_minus))
        # Offset in series with the + input; an ideal op-amp holds its inputs equal,
        # a finite gain A0 gives V(out) = A0 (V(+) + Vos - V(-)).
        differential = volt(u.plus) + q(u.offset) - volt(u.minus)
        if u.model == "ideal":
            equations.append(sympy.Eq(differential, 0))
        else:
            equations.append(sympy.Eq(q(u.open_loop_gain) * differential, volt(u.output)))
    equations += [sympy.Eq(leaving[n], 0) for n in net.nodes]
    unknowns = list(v.values()) + list(source_current.values()) + list(output_current.values())
    return unknowns, equations


def exact_node_voltages(net: Network) -> Dict[str, sympy.Rational]:
    unknowns, equations = node_equations(net)
    solutions = sympy.linsolve(equations, unknowns)
    assert len(solutions) == 1
    (solution,) = solutions
    return {n: solution[i] for i, n in enumerate(net.nodes)}


def is_well_posed(net: Network) -> bool:
    unknowns, equations = node_equations(net)
    a, _ = sympy.linear_eq_to_matrix(equations, unknowns)
    if a.det() == 0:
        return False
    return np.linalg.cond(np.array(a.evalf(), dtype=float)) < 1e10


def networks(model: str, count: int, first_seed: int) -> List[Tuple[int, Network]]:
    """The first `count` well-posed networks from consecutive seeds (deterministic)."""
    found = []
    seed = first_seed
    while len(found) < count:
        net = random_network(seed, model)
        if is_well_posed(net):
            found.append((seed, net))
        seed += 1
    return found


CASES = (
    [("ideal", s, n) for s, n in networks("ideal", 3, 100)]
    + [("finite_gain", s, n) for s, n in networks("finite_gain", 3, 200)]
    + [("single_pole", s, n) for s, n in networks("single_pole", 1, 300)]
)


def to_design(net: Network) -> lotwise.Design:
    d = lotwise.Design(title="random network")
    for name, a, b, r in net.resistors:
        d.resistor(name, a, b, float(r))
    for name, plus, minus, value in net.voltage_sources:
        d.voltage_source(name, plus, minus, float(value))
    for name, a, b, value in net.current_sources:
        d.current_source(name, a, b, float(value))
    for u in net.opamps:
        d.opamp(u.name, u.plus, u.minus, u.output, model=u.model,
                open_loop_gain=float(u.open_loop_gain), offset=float(u.offset),
                bias_plus=float(u.bias_plus), bias_minus=float(u.bias_minus))
    for n in net.nodes:
        d.measure(f"v_{n}", "node_voltage", output=n)
    return d


def assert_matches(computed: Dict[str, float], exact: Dict[str, "sympy.Rational"]) -> None:
    reference = np.array([float(exact[n]) for n in exact])
    values = np.array([computed[n] for n in exact])
    # Relative to the largest node voltage: a node that sits near 0 V by cancellation
    # carries the absolute error of its neighbours.
    scale = np.max(np.abs(reference))
    assert scale > 0
    np.testing.assert_allclose(values, reference, rtol=1e-9, atol=1e-9 * scale)


@pytest.mark.parametrize(("model", "seed", "net"), CASES,
                         ids=[f"{m}-seed{s}" for m, s, _ in CASES])
def test_node_voltages_match_sympy(model, seed, net):
    exact = exact_node_voltages(net)
    study = to_design(net).compile()
    measured = {name[2:]: value for name, value in study.nominal_values.items()}
    assert_matches(measured, exact)
    assert_matches(study.operating_point(), exact)


@pytest.mark.parametrize(("model", "seed", "net"), CASES[:4],
                         ids=[f"{m}-seed{s}" for m, s, _ in CASES[:4]])
def test_perturbed_values_match_sympy(model, seed, net):
    # Study.evaluate with every resistor moved by up to 5 %: the per-sample path.
    rng = random.Random(seed)
    study = to_design(net).compile()
    moved = Network(net.nodes, [], net.voltage_sources, net.current_sources, net.opamps)
    for name, a, b, r in net.resistors:
        moved.resistors.append((name, a, b, r * Fraction(1000 + rng.randint(-50, 50), 1000)))
    changed = {name: float(r) for name, _, _, r in moved.resistors}
    exact = exact_node_voltages(moved)
    measured = {name[2:]: value for name, value in study.evaluate(changed).items()}
    assert_matches(measured, exact)


def test_finite_gain_differs_from_ideal():
    # The finite-gain cases must not pass merely because A0 is irrelevant.
    _, _, net = next(c for c in CASES if c[0] == "finite_gain")
    ideal = Network(net.nodes, net.resistors, net.voltage_sources, net.current_sources,
                    [OpAmp(**{**u.__dict__, "model": "ideal"}) for u in net.opamps])
    finite = exact_node_voltages(net)
    exact_ideal = exact_node_voltages(ideal)
    gap = max(abs(float(finite[n] - exact_ideal[n])) for n in net.nodes)
    scale = max(abs(float(finite[n])) for n in net.nodes)
    assert gap > 1e-7 * scale


def test_numpy_solve_of_the_same_equations_agrees():
    # The same first-principles equations as a float matrix, solved with
    # numpy.linalg.solve (LAPACK gesv): an independent solver path.
    for model, _, net in CASES:
        unknowns, equations = node_equations(net)
        a, b = sympy.linear_eq_to_matrix(equations, unknowns)
        x = np.linalg.solve(np.array(a.evalf(), dtype=float), np.array(b.evalf(), dtype=float).ravel())
        numeric = dict(zip(net.nodes, x[: len(net.nodes)]))
        computed = to_design(net).compile().operating_point()
        reference = np.array([numeric[n] for n in net.nodes])
        np.testing.assert_allclose([computed[n] for n in net.nodes], reference,
                                   rtol=1e-9, atol=1e-9 * np.max(np.abs(reference)))


def test_cases_cover_both_op_amp_laws_and_every_source():
    models = {m for m, _, _ in CASES}
    assert {"ideal", "finite_gain"} <= models
    assert all(net.opamps and net.voltage_sources and net.current_sources for _, _, net in CASES)
    assert sum(len(net.opamps) > 1 for _, _, net in CASES) >= 1
