"""What ``suggest`` returns: a plain list of suggestions that a notebook shows as a table."""

from __future__ import annotations


class Suggestions(list):
    """The ranked :class:`~bayesirl.design.Suggestion` records of :func:`bayesirl.suggest`.

    A ``list`` in every respect (index, slice, iterate, compare); in a notebook it displays
    as the ranked table, with cells named as (row, col) on grid problems.

    Parameters
    ----------
    items : iterable of Suggestion
    grid_shape : (rows, cols), optional
        The problem's grid, to name cells in the table.
    """

    def __init__(self, items=(), *, grid_shape: tuple[int, int] | None = None) -> None:
        super().__init__(items)
        self.grid_shape = None if grid_shape is None else tuple(int(x) for x in grid_shape)

    def _repr_html_(self) -> str:
        """Notebook display: the ranked table and whether the ranking is settled."""
        # The report layer draws it from plain records; imported only when displayed.
        from bayesirl.report.notebook import suggestions_html

        return suggestions_html(self, grid_shape=self.grid_shape)
