"""Grid worlds from a text map and a legend of cell symbols."""

from __future__ import annotations

from typing import NamedTuple

import numpy as np
import scipy.sparse as sp

from bayesirl.errors import InputError
from bayesirl.io.fields import Table

# Action order: the four compass moves first (same indices with 8 moves), then the diagonals.
MOVES = {
    "up": (-1, 0), "right": (0, 1), "down": (1, 0), "left": (0, -1),
    "up-right": (-1, 1), "down-right": (1, 1), "down-left": (1, -1), "up-left": (-1, -1),
}
LEGEND_FLAGS = ("blocked", "goal", "start")


class Grid(NamedTuple):
    """A parsed map: symbols per cell, the legend and the movement rules."""

    rows: list[str]
    features: list[str]
    legend: dict[str, dict]
    moves: int
    slip: float

    @property
    def shape(self) -> tuple[int, int]:
        """``(rows, cols)``."""
        return len(self.rows), len(self.rows[0])

    @property
    def action_names(self) -> tuple[str, ...]:
        """Move names, in action-index order."""
        return tuple(list(MOVES)[: self.moves])

    def cells_with(self, flag: str) -> list[int]:
        """States (row-major cell indices) whose symbol has ``flag`` set."""
        cols = self.shape[1]
        return [r * cols + c for r, line in enumerate(self.rows) for c, ch in enumerate(line)
                if self.legend[ch][flag]]


def parse_map(table: Table) -> Grid:
    """Read ``[map]`` (``cells``, ``features``, ``moves``, ``slip``) and ``[map.legend]``."""
    table.only({"cells", "features", "moves", "slip", "legend"})
    text = table.string("cells")
    rows = [line.strip() for line in text.splitlines() if line.strip()]
    if not rows:
        raise table.fail("cells", text, "a map with at least one row of cell symbols")
    for i, line in enumerate(rows):
        if len(line) != len(rows[0]):
            raise InputError(f"{table.where('cells')}: row {i} has {len(line)} cells, row 0 has "
                             f"{len(rows[0])}; every row of the map must be equally long")
    features = table.strings("features")
    if not features:
        raise table.fail("features", features, "at least one feature name")
    clash = [f for f in features if f in LEGEND_FLAGS]
    if clash:
        raise table.fail("features", features, "feature names other than "
                         f"{', '.join(LEGEND_FLAGS)} (legend flags); rename {clash[0]!r}")
    moves = table.integer("moves", 4)
    if moves not in (4, 8):
        raise table.fail("moves", moves, "4 or 8")
    slip = table.number("slip", 0.0, low=0.0, high=1.0, high_open=True)
    legend = _legend(table.table("legend"), features)
    for i, line in enumerate(rows):
        for j, ch in enumerate(line):
            if ch not in legend:
                raise InputError(
                    f"{table.where('cells')}: row {i}, column {j}: symbol {ch!r} is not in "
                    f"[{table.name}.legend] (known symbols: {' '.join(sorted(legend))})")
    if all(legend[ch]["blocked"] for line in rows for ch in line):
        raise InputError(f"{table.where('cells')}: every cell of the map is blocked; "
                         "demonstrations need at least one open cell")
    return Grid(rows, features, legend, moves, slip)


def _legend(table: Table, features: list[str]) -> dict[str, dict]:
    out = {}
    for symbol in table.data:
        if len(symbol) != 1 or symbol.isspace():
            raise InputError(f"{table.where(repr(symbol))}: legend keys must be single "
                             "non-space characters (the symbols of the map)")
        entry = table.table(symbol)
        entry.only(set(features) | set(LEGEND_FLAGS))
        values = [entry.number(f, 0.0) for f in features]
        flags = {k: entry.boolean(k, False) for k in LEGEND_FLAGS}
        if flags["blocked"] and (flags["goal"] or flags["start"]):
            raise InputError(f"{entry.where('blocked')}: a blocked cell cannot also be a goal "
                             "or a start cell")
        out[symbol] = {"features": values, **flags}
    if not out:
        raise InputError(f"{table.where('')}: the legend is empty; give each map symbol's "
                         "feature values")
    return out


def grid_arrays(grid: Grid) -> tuple[sp.csr_matrix, np.ndarray, np.ndarray | None]:
    """Transitions ``(S*A, S)``, features ``(S, F)`` and the start distribution (or None).

    The intended move happens with probability ``1 - slip``; otherwise one of the other moves,
    uniformly. A move off the map or into a blocked cell leaves the walker where it is. Goal
    cells absorb; blocked cells are states that loop to themselves and are never entered.
    """
    n_rows, n_cols = grid.shape
    n = n_rows * n_cols
    names = grid.action_names
    n_a = len(names)
    symbols = [grid.legend[ch] for line in grid.rows for ch in line]
    phi = np.array([sym["features"] for sym in symbols], dtype=np.float64)
    rows, cols, vals = [], [], []
    for s, sym in enumerate(symbols):
        r, c = divmod(s, n_cols)
        for a in range(n_a):
            if sym["goal"] or sym["blocked"]:
                rows.append(s * n_a + a)
                cols.append(s)
                vals.append(1.0)
                continue
            for b, name in enumerate(names):
                p = 1.0 - grid.slip if a == b else grid.slip / (n_a - 1)
                if p == 0.0:
                    continue
                dr, dc = MOVES[name]
                rr, cc = r + dr, c + dc
                inside = 0 <= rr < n_rows and 0 <= cc < n_cols
                target = rr * n_cols + cc if inside else s
                if symbols[target]["blocked"]:
                    target = s
                rows.append(s * n_a + a)
                cols.append(target)
                vals.append(p)
    matrix = sp.csr_matrix((vals, (rows, cols)), shape=(n * n_a, n))
    matrix.sum_duplicates()
    starts = grid.cells_with("start")
    start = None
    if starts:
        start = np.zeros(n)
        start[starts] = 1.0 / len(starts)
    return matrix, phi, start
