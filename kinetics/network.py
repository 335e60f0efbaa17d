"""The species graph: roles, reversible pairs, cycles, components.

The graph (a :class:`networkx.DiGraph`) has one node per species, matrix and
excess species alike, and one edge ``reactant -> product`` per step, carrying
the step indices and constants.  From it:

* **roles**: *starting material* (consumed, never formed), *intermediate*
  (formed and consumed), *end product* (formed, never consumed), *held in
  excess* (constant co-reactant), *inert* (neither formed nor consumed); a
  reversible reaction counts in the direction it is written (in ``A <=> B``, A
  is consumed and B formed);
* **reversible pairs** (edges both ways), **cycles** (elementary cycles of
  length three or more: irreversible loops), **strongly connected
  components** and **disconnected sub-schemes** (weakly connected components
  of the matrix species; excess species, being constant, connect nothing).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import networkx as nx
import numpy as np

if TYPE_CHECKING:
    from .scheme import Scheme

__all__ = [
    "ROLES",
    "Condensation",
    "NetworkSummary",
    "condensation",
    "species_graph",
    "summarise_network",
]

#: The role names used in reports and JSON.
ROLES = ("starting material", "intermediate", "end product", "held in excess", "inert")


def species_graph(scheme: Scheme) -> nx.DiGraph:
    r"""Species graph of ``scheme``: nodes are species, edges are steps reactant -> product.

    Node attributes: ``excess`` (bool), ``index`` (matrix index or None).
    Edge attributes: ``steps`` (list of step indices), ``constants`` (list of names).
    Co-reactants in excess get an edge to the products too (``co_reactant=True``).

    Examples
    --------
    >>> import kinetics
    >>> s = kinetics.parse("A -> B  k1 = 1 1/s\nB <=> C  k2 = 1 1/s, k3 = 1 1/s\nstart A = 1 M")
    >>> sorted(species_graph(s).edges)
    [('A', 'B'), ('B', 'C'), ('C', 'B')]
    """
    graph = nx.DiGraph()
    for s in scheme.species:
        graph.add_node(s.name, excess=False, index=scheme.index[s.name])
    for s in scheme.excess_species:
        graph.add_node(s.name, excess=True, index=None)
    for i, step in enumerate(scheme.steps):
        for _, product in step.products:
            if graph.has_edge(step.reactant, product):
                data = graph.edges[step.reactant, product]
                data["steps"].append(i)
                data["constants"].append(step.constant)
            else:
                graph.add_edge(step.reactant, product, steps=[i], constants=[step.constant])
        for _, partner in step.co_reactants:
            for _, product in step.products:
                if not graph.has_edge(partner, product):
                    graph.add_edge(partner, product, steps=[], constants=[], co_reactant=True)
    return graph


@dataclass(frozen=True)
class NetworkSummary:
    """Structure of a scheme's species graph.

    Attributes
    ----------
    roles : dict of str to str
        Species -> one of :data:`ROLES`.
    reversible_pairs : list of tuple of str
    cycles : list of list of str
        Irreversible loops (three or more species).
    strongly_connected : list of list of str
        Components with more than one species, in topological order.
    sub_schemes : list of list of str
        Disconnected parts of the matrix species (only when there are two or
        more); species held in excess do not connect parts, since their
        concentration is constant.
    """

    roles: dict[str, str]
    reversible_pairs: list[tuple[str, str]]
    cycles: list[list[str]]
    strongly_connected: list[list[str]]
    sub_schemes: list[list[str]]

    def to_dict(self) -> dict:
        """JSON-ready form."""
        return {
            "roles": self.roles,
            "reversible_pairs": [list(p) for p in self.reversible_pairs],
            "cycles": self.cycles,
            "strongly_connected_components": self.strongly_connected,
            "sub_schemes": self.sub_schemes,
        }


def summarise_network(scheme: Scheme, *, max_cycles: int = 50) -> NetworkSummary:
    r"""Roles, reversible pairs, cycles and components of ``scheme``'s species graph.

    Parameters
    ----------
    scheme : Scheme
    max_cycles : int, optional
        At most this many cycles are listed (large networks can have very many).

    Returns
    -------
    NetworkSummary

    Examples
    --------
    >>> import kinetics
    >>> s = kinetics.parse(
    ...     "A -> B  k1 = 1 1/s\nB <=> C  k2 = 1 1/s, k3 = 1 1/s\nC -> D  k4 = 1 1/s\n"
    ...     "start A = 1 M"
    ... )
    >>> summary = summarise_network(s)
    >>> summary.roles["A"], summary.roles["C"], summary.roles["D"]
    ('starting material', 'intermediate', 'end product')
    >>> summary.reversible_pairs, summary.strongly_connected
    ([('B', 'C')], [['B', 'C']])
    """
    graph = species_graph(scheme)
    order = {name: i for i, name in enumerate(graph.nodes)}
    roles = _roles(scheme, graph)
    # the graph of the matrix species without co-reactant edges, built directly (a copy
    # of a subgraph view costs seconds for 20,000 steps), nodes in matrix order
    matrix = set(scheme.index)
    matrix_graph = nx.DiGraph()
    matrix_graph.add_nodes_from(s.name for s in scheme.species)
    matrix_graph.add_edges_from(
        (a, b)
        for a, b, co in graph.edges(data="co_reactant")
        if not co and a in matrix and b in matrix
    )
    pairs = sorted(
        {
            tuple(sorted((a, b), key=order.__getitem__))
            for a, b in matrix_graph.edges
            if a != b and matrix_graph.has_edge(b, a)
        },
        key=lambda p: (order[p[0]], order[p[1]]),
    )
    cycles: list[list[str]] = []
    if len(matrix_graph) <= 2000:
        for cycle in nx.simple_cycles(matrix_graph, length_bound=None):
            if len(cycle) >= 3:
                first = min(range(len(cycle)), key=lambda i: order[cycle[i]])
                cycles.append(cycle[first:] + cycle[:first])
                if len(cycles) >= max_cycles:
                    break
    cycles.sort(key=lambda c: [order[n] for n in c])
    condensation = nx.condensation(matrix_graph)
    components = []
    for node in nx.topological_sort(condensation):
        members = condensation.nodes[node]["members"]
        if len(members) > 1:
            components.append(sorted(members, key=order.__getitem__))
    # excess species are constant: they do not couple the parts they take part in
    weak = [sorted(c, key=order.__getitem__) for c in nx.weakly_connected_components(matrix_graph)]
    weak.sort(key=lambda c: order[c[0]])
    return NetworkSummary(roles, pairs, cycles, components, weak if len(weak) > 1 else [])


def _roles(scheme: Scheme, graph: nx.DiGraph) -> dict[str, str]:
    """The role of every species (one of :data:`ROLES`) in the species graph of ``scheme``.

    Roles follow the reactions as written: a reversible reaction A <=> B counts in its
    forward direction only (A is the starting material, B the product).
    """
    forward = [step for step in scheme.steps if step.direction == "forward"]
    consumed = {step.reactant for step in forward}
    formed = {p for step in forward for _, p in step.products if p != step.reactant}
    roles = {}
    for name, data in graph.nodes(data=True):
        if data["excess"]:
            roles[name] = "held in excess"
        elif name in consumed and name in formed:
            roles[name] = "intermediate"
        elif name in consumed:
            roles[name] = "starting material"
        elif name in formed:
            roles[name] = "end product"
        else:
            roles[name] = "inert"
    return roles


@dataclass(frozen=True)
class Condensation:
    """Strongly connected components of a species graph and the DAG between them.

    Attributes
    ----------
    labels : numpy.ndarray of int
        Component of each species.
    members : list of numpy.ndarray
        Species of each component, in ascending order.
    order : list of int
        Components in topological order (upstream first).
    predecessors : list of list of int
        Components that feed each component.
    dag : networkx.DiGraph
        The condensation: one node per component, an edge where material flows.
    """

    labels: np.ndarray
    members: list[np.ndarray]
    order: list[int]
    predecessors: list[list[int]]
    dag: nx.DiGraph

    @property
    def count(self) -> int:
        """Number of components."""
        return len(self.members)


def condensation(sources, targets, n: int) -> Condensation:
    """Components of the graph with edges ``sources[e] -> targets[e]`` on ``n`` species.

    For a rate matrix the edge ``j -> i`` stands for ``K[i, j] > 0`` (j forms i).  The
    components come from scipy's strongly-connected-components routine, their
    topological order from networkx.

    Parameters
    ----------
    sources, targets : array_like of int
        Edge ends; repeated edges are allowed.
    n : int
        Number of species.

    Returns
    -------
    Condensation

    Examples
    --------
    Species 0 feeds the loop 1 <-> 2, which feeds nothing; species 3 stands alone:

    >>> c = condensation([0, 1, 2], [1, 2, 1], 4)
    >>> c.count, [m.tolist() for m in c.members], c.labels.tolist()
    (3, [[1, 2], [0], [3]], [1, 0, 0, 2])
    """
    import scipy.sparse
    from scipy.sparse.csgraph import connected_components

    sources = np.asarray(sources, dtype=np.int64)
    targets = np.asarray(targets, dtype=np.int64)
    adj = scipy.sparse.csr_array((np.ones(sources.size), (sources, targets)), shape=(n, n))
    count, labels = connected_components(adj, directed=True, connection="strong")
    src, dst = labels[sources], labels[targets]
    cross = src != dst
    dag = nx.DiGraph()
    dag.add_nodes_from(range(count))
    dag.add_edges_from(set(zip(src[cross].tolist(), dst[cross].tolist(), strict=True)))
    by_label = np.argsort(labels, kind="stable")
    bounds = np.searchsorted(labels[by_label], np.arange(count + 1))
    members = [by_label[bounds[c] : bounds[c + 1]] for c in range(count)]
    return Condensation(
        labels=labels,
        members=members,
        order=list(nx.topological_sort(dag)),
        predecessors=[list(dag.predecessors(c)) for c in range(count)],
        dag=dag,
    )
