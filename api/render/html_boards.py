"""Which board feeds which: the boards of a verify body as a tree, with each board's counts.

Invariants:
- Every board that has a verdict on the page, or that the body's ``boards``
  section names, is in the tree exactly once, in first-seen order (the
  ``boards`` section first, then the verdicts).
- A board's feeder (``"BOARD/CIRCUIT"``, as ``board_fed_from`` spells it) is
  taken from, in this order: the body's ``boards`` section; a verdict's own
  ``board_fed_from``; a check's ``inputs.board_fed_from``; the nearest entry of
  the voltage-drop check's ``inputs.upstream`` (the engine lists the feeders
  nearest first). The first board to say wins.
- A board whose feeder is not on the page, or whose feeders lead back to itself,
  is a root: a loop in the records never hides a board or hangs the renderer.
  Its feeder is still shown as text. A board fed from a loop it is not part of
  hangs under its feeder as usual.
- Counts are the board's own circuits by outcome (the circuits of the boards it
  feeds are counted under those boards).
"""

from __future__ import annotations

from collections import Counter
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

__all__ = ["BoardNode", "board_tree", "feeder_of", "split_feeder"]


@dataclass(slots=True, kw_only=True)
class BoardNode:
    """One board: its facts (from the body's ``boards`` section), feeder, counts and sub-boards."""

    board: str
    anchor: str
    facts: Mapping[str, Any]
    fed_from: str | None
    feeder_board: str | None
    feeder_circuit: str | None
    counts: Counter[str]
    verdicts: list[Mapping[str, Any]] = field(default_factory=list)
    children: list[BoardNode] = field(default_factory=list)

    @property
    def circuits(self) -> int:
        return sum(self.counts.values())


def feeder_of(verdict: Mapping[str, Any]) -> str | None:
    """The ``"BOARD/CIRCUIT"`` feeding the verdict's board, as far as the verdict tells."""
    own = verdict.get("board_fed_from")
    if isinstance(own, str) and own:
        return own
    for check in verdict.get("checks") or ():
        inputs = check.get("inputs") or {}
        told = inputs.get("board_fed_from")
        if isinstance(told, str) and told:
            return told
    for check in verdict.get("checks") or ():
        upstream = (check.get("inputs") or {}).get("upstream")
        if check.get("check") == "voltage_drop" and isinstance(upstream, list) and upstream \
                and isinstance(upstream[0], str):
            return upstream[0]
    return None


def split_feeder(feeder: str, boards: Iterable[str]) -> tuple[str, str]:
    """``"DB1/5"`` → ``("DB1", "5")``; a board name that itself holds ``/`` is matched whole."""
    known = sorted((b for b in boards if feeder.startswith(b + "/")), key=len, reverse=True)
    if known:
        return known[0], feeder[len(known[0]) + 1:]
    board, _, circuit = feeder.rpartition("/")
    return (board, circuit) if board else (feeder, "")


def _sections(body: Mapping[str, Any]) -> dict[str, Mapping[str, Any]]:
    found: dict[str, Mapping[str, Any]] = {}
    boards = body.get("boards")
    for item in boards if isinstance(boards, list) else ():
        if isinstance(item, Mapping) and isinstance(item.get("board"), str):
            found.setdefault(item["board"], item)
    return found


def board_tree(body: Mapping[str, Any], verdicts: Sequence[Mapping[str, Any]]) -> list[BoardNode]:
    """The roots of the board tree (see the module's invariants); nodes are numbered ``b1``, ``b2`` …."""
    sections = _sections(body)
    order = list(dict.fromkeys([*sections, *(str(v["board"]) for v in verdicts)]))
    nodes: dict[str, BoardNode] = {}
    for index, name in enumerate(order, start=1):
        facts = sections.get(name, {})
        told = facts.get("board_fed_from")
        nodes[name] = BoardNode(board=name, anchor=f"b{index}", facts=facts,
                                fed_from=told if isinstance(told, str) and told else None,
                                feeder_board=None, feeder_circuit=None, counts=Counter())
    for verdict in verdicts:
        node = nodes[str(verdict["board"])]
        node.verdicts.append(verdict)
        node.counts[str(verdict["outcome"])] += 1
        if node.fed_from is None:
            node.fed_from = feeder_of(verdict)
    for node in nodes.values():
        if node.fed_from is not None:
            node.feeder_board, node.feeder_circuit = split_feeder(node.fed_from, nodes)
    roots: list[BoardNode] = []
    for node in nodes.values():
        parent = _parent(node, nodes)
        (parent.children if parent is not None else roots).append(node)
    return roots


def _parent(node: BoardNode, nodes: Mapping[str, BoardNode]) -> BoardNode | None:
    """The feeding board when it is on the page and no chain of feeders leads back to ``node``."""
    parent = nodes.get(node.feeder_board) if node.feeder_board is not None else None
    seen: set[str] = set()
    step = parent
    while step is not None:
        if step.board == node.board:
            return None  # a loop of feeders through this board: it stands as a root, its feeder as text
        if step.board in seen:
            break  # a loop further up that does not pass through this board
        seen.add(step.board)
        step = nodes.get(step.feeder_board) if step.feeder_board is not None else None
    return parent
