"""Small-graph routines for entity diagnostics, in plain Python over adjacency dictionaries.

Diagnostics examine thousands of small entity graphs (a handful of records each). Building a
networkx graph and running its generic algorithms costs far more than the graphs themselves
at that size, so the routines every examined entity needs (bridges, articulation points,
components with a node or an edge taken out) are written here over plain dictionaries. They
give the same answers as networkx; the adjacency dictionaries are filled in the same order as
networkx fills its own, so that anything that depends on neighbour order (a sum of link
probabilities) is computed in the same order too. Rarer and heavier work (minimum cuts,
communities) stays with networkx.
"""

from __future__ import annotations

Adjacency = dict[int, dict[int, float]]


def adjacency(nodes, edges) -> Adjacency:
    """Adjacency of an undirected simple graph: ``nodes`` in order, then ``edges`` as
    (u, v, weight) in order; a repeated edge keeps its first place and its last weight, as in
    networkx."""
    adj: Adjacency = {n: {} for n in nodes}
    for u, v, w in edges:
        adj.setdefault(u, {})[v] = w
        adj.setdefault(v, {})[u] = w
    return adj


def cut_points_and_bridges(adj: Adjacency) -> tuple[set[int], list[tuple[int, int]]]:
    """Articulation points and bridges, by one iterative depth-first search per component
    (Tarjan's low-link method). Bridges are (parent, child) pairs of the search tree."""
    index: dict[int, int] = {}
    low: dict[int, int] = {}
    points: set[int] = set()
    bridges: list[tuple[int, int]] = []
    for root in adj:
        if root in index:
            continue
        index[root] = low[root] = len(index)
        children = 0
        stack = [(root, None, iter(adj[root]))]
        while stack:
            node, parent, neighbours = stack[-1]
            for nxt in neighbours:
                if nxt == parent or nxt == node:
                    continue
                if nxt in index:
                    low[node] = min(low[node], index[nxt])
                else:
                    index[nxt] = low[nxt] = len(index)
                    stack.append((nxt, node, iter(adj[nxt])))
                    break
            else:
                stack.pop()
                if parent is None:
                    continue
                low[parent] = min(low[parent], low[node])
                if low[node] > index[parent]:
                    bridges.append((parent, node))
                if parent == root:
                    children += 1
                elif low[node] >= index[parent]:
                    points.add(parent)
        if children >= 2:
            points.add(root)
    return points, bridges


def components(adj: Adjacency, without_node: int | None = None,
               without_edge: tuple[int, int] | None = None) -> list[set[int]]:
    """Connected components, optionally with one node or one edge taken out, each found from
    its first node in adjacency order."""
    gone = set() if without_edge is None else {without_edge, without_edge[::-1]}
    seen: set[int] = set() if without_node is None else {without_node}
    parts = []
    for start in adj:
        if start in seen:
            continue
        seen.add(start)
        part, todo = {start}, [start]
        while todo:
            node = todo.pop()
            for nxt in adj[node]:
                if nxt not in seen and (node, nxt) not in gone:
                    seen.add(nxt)
                    part.add(nxt)
                    todo.append(nxt)
        parts.append(part)
    return parts
