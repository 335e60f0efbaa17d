"""The species graph: roles, reversible pairs, cycles, strong components, sub-schemes.

Expected structures are worked out by hand from the definitions of directed
graphs (common practice, no source); strong and weak components are also
checked against scipy's independent implementation (scipy.sparse.csgraph) on
the off-diagonal pattern of the rate matrix.
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.sparse
from scipy.sparse.csgraph import connected_components

from kinetics import parse
from kinetics.network import ROLES, species_graph, summarise_network


def summary(text: str):
    return summarise_network(parse(text))


def test_consecutive_steps_roles():
    net = summary("A -> B  k1 = 1 1/s\nB -> C  k2 = 1 1/s")
    assert net.roles == {"A": "starting material", "B": "intermediate", "C": "end product"}
    assert net.reversible_pairs == []
    assert net.cycles == []
    assert net.strongly_connected == []
    assert net.sub_schemes == []


def test_reversible_pair_counts_in_its_written_direction():
    net = summary("A <=> B  kf = 1 1/s, kr = 2 1/s\nB -> C  k = 1 1/s")
    assert net.roles == {"A": "starting material", "B": "intermediate", "C": "end product"}
    assert net.reversible_pairs == [("A", "B")]
    assert net.strongly_connected == [["A", "B"]]
    assert net.cycles == []  # a pair is not listed as a cycle


def test_plain_reversible_isomerisation():
    net = summary("A <=> B  kf = 1 1/s, kr = 2 1/s")
    assert net.roles == {"A": "starting material", "B": "end product"}


def test_irreversible_loop_is_a_cycle_and_one_component():
    net = summary("A -> B  k = 1 1/s\nB -> C  k\nC -> A  k")
    assert net.roles == dict.fromkeys("ABC", "intermediate")
    assert net.cycles == [["A", "B", "C"]]
    assert net.strongly_connected == [["A", "B", "C"]]


def test_cycle_through_a_reversible_pair_and_branch():
    net = summary(
        "A -> B + C  k = 1 1/s\nB <=> D  kf = 1 1/s, kr = 2 1/s\nD -> B + E  k\nE -> A  k"
    )
    assert net.roles["C"] == "end product"
    assert net.reversible_pairs == [("B", "D")]
    assert net.cycles == [["A", "B", "D", "E"]]
    assert net.strongly_connected == [["A", "B", "D", "E"]]


def test_components_in_topological_order():
    net = summary("A <=> B  kf = 1 1/s, kr = 1 1/s\nB -> C  k = 1 1/s\nC <=> D  kf, kr")
    assert net.strongly_connected == [["A", "B"], ["C", "D"]]


def test_disconnected_sub_schemes():
    net = summary("A -> B  k = 1 1/s\nC -> D  k\nB -> E  k")
    assert net.sub_schemes == [["A", "B", "E"], ["C", "D"]]


def test_excess_species_do_not_connect_sub_schemes():
    net = summary("A + W -> B  k = 1 M-1 s-1\nC + W -> D  k\nexcess W = 1 M")
    assert net.roles["W"] == "held in excess"
    assert net.sub_schemes == [["A", "B"], ["C", "D"]]


def test_roles_are_from_the_published_list():
    net = summary("A + W -> B  k = 1 M-1 s-1\nB <=> C  kf = 1 1/s, kr = 1 1/s\nexcess W = 1 M")
    assert set(net.roles.values()) <= set(ROLES)


def test_species_graph_nodes_and_edges():
    s = parse("A + W -> B + 2 C  k1 = 1 M-1 s-1\nB -> C  k2 = 1 1/s\nC -> B  k2\nexcess W = 1 M")
    g = species_graph(s)
    assert dict(g.nodes(data="excess")) == {"A": False, "B": False, "C": False, "W": True}
    assert g.nodes["W"]["index"] is None
    assert g.edges["A", "C"]["constants"] == ["k1"]
    assert g.edges["B", "C"]["steps"] == [1]
    assert g.edges["W", "B"]["co_reactant"] is True
    net = summarise_network(s)
    assert net.reversible_pairs == [("B", "C")]  # two irreversible steps both ways


def test_to_dict_keys():
    d = summary("A -> B  k = 1 1/s").to_dict()
    assert set(d) == {
        "roles",
        "reversible_pairs",
        "cycles",
        "strongly_connected_components",
        "sub_schemes",
    }


@pytest.mark.parametrize(
    "text",
    [
        "A -> B  k = 1 1/s\nB -> C  k\nC -> A  k\nC -> D  k\nD <=> E  kf = 1 1/s, kr = 1 1/s",
        "A -> B + C  k = 1 1/s\nD -> E  k\nE -> D  k\nF -> G  k\nG -> H + F  k",
        "A <=> B  kf = 1 1/s, kr = 1 1/s\nC <=> D  kf, kr\nE -> A + C  k = 1 1/s",
    ],
)
def test_components_agree_with_scipy(text):
    s = parse(text)
    K = s.rate_matrix()
    adjacency = scipy.sparse.csr_array((K.T != 0) & ~np.eye(len(K), dtype=bool))  # j -> i
    net = summarise_network(s)
    _, strong = connected_components(adjacency, directed=True, connection="strong")
    groups = {}
    for i, label in enumerate(strong):
        groups.setdefault(label, []).append(s.species_names[i])
    assert sorted(g for g in groups.values() if len(g) > 1) == sorted(net.strongly_connected)
    n_weak, _ = connected_components(adjacency, directed=True, connection="weak")
    assert len(net.sub_schemes) == (n_weak if n_weak > 1 else 0)
