"""Problem files (TOML): the world, the demonstrator model, the prior and the sampler settings.

Exactly one world table: ``[map]`` (a grid from a text map and a legend), ``[arrays]``
(transitions and features from an ``.npz`` file, or features from a CSV) or ``[gym]`` (a
gymnasium toy-text environment plus a feature specification). The format is described with
complete examples in README.md ("Problem files (TOML)").
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

from bayesirl.errors import InputError
from bayesirl.io import arrays as arrays_mod
from bayesirl.io.fields import Table, load_toml, path_argument
from bayesirl.io.pooling import pooling_from
from bayesirl.io.settings import (
    judge_from,
    prior_from,
    rationality_from,
    report_from,
    sampler_from,
    solver_from,
)
from bayesirl.io.transitionfiles import DynamicsSettings, dynamics_from
from bayesirl.model import TabularMDP
from bayesirl.posterior.groups import Pooling
from bayesirl.resources import MAX_HORIZON, check_horizon

TOP_KEYS = {"title", "model", "map", "arrays", "gym", "prior", "rationality", "sampler",
            "solver", "pooling", "report", "dynamics", "judge"}
WORLDS = ("map", "arrays", "gym")


@dataclass
class Problem:
    """Everything a problem file describes, checked.

    Attributes
    ----------
    mdp : TabularMDP
    action_names : tuple of str or None
        Names usable in demonstration files (indices always work).
    prior : prior object for the weights
    rationality : float (fixed) or LogNormal (sampled)
    pin : dict of pinned weights (needed when the rationality is sampled)
    q_function : "soft" or "optimal" (the Q the Boltzmann policy uses; ``[model]
        q_function``, called ``demonstrator`` before 0.2)
    sampler : keyword arguments for :func:`bayesirl.sample`
    solver : keyword arguments for :class:`bayesirl.BoltzmannLikelihood` (numerical settings)
    source : the problem file
    blocked : states that demonstrations may never visit (blocked map cells)
    pooling : how named demonstrators share a reward (``[pooling]``; default pooled)
    report : the report's ``level`` and optional ``tolerance`` (``[report]``)
    dynamics : ``[dynamics]``: transition evidence and its Dirichlet prior (None: the
        transitions are taken as known, the plug-in; see docs/dynamics.md)
    judge : the comparisons' judge: ``rationality`` and Davidson's ``tie`` parameter, each a
        number (fixed), a LogNormal (sampled) or, for ``tie``, None (``[judge]``)
    """

    mdp: TabularMDP
    action_names: tuple[str, ...] | None
    prior: object
    rationality: object
    pin: dict
    q_function: str
    sampler: dict
    source: Path
    title: str = ""
    world: str = "arrays"
    blocked: frozenset = field(default_factory=frozenset)
    solver: dict = field(default_factory=dict)
    pooling: Pooling = field(default_factory=Pooling)
    report: dict = field(default_factory=lambda: {"level": 0.9})
    dynamics: DynamicsSettings | None = None
    judge: dict = field(default_factory=lambda: {"rationality": 1.0, "tie": None})

    def action_index(self, name: str) -> int | None:
        """The index of an action given by name or by a decimal index, else None."""
        names = self.action_names or ()
        if name in names:
            return names.index(name)
        digits = name.strip().lstrip("-")
        if digits.isascii() and digits.isdigit():  # isdigit alone admits "²", which int refuses
            a = int(name)
            return a if 0 <= a < self.mdp.n_actions else None
        return None

    def action_label(self, a: int) -> str:
        """Name of action ``a`` (its index when actions are unnamed)."""
        return self.action_names[a] if self.action_names else str(a)

    def state_label(self, s: int) -> str:
        """``(row, col)`` on a map, else the index."""
        if self.mdp.grid_shape and s < self.mdp.grid_shape[0] * self.mdp.grid_shape[1]:
            return str(divmod(int(s), self.mdp.grid_shape[1]))
        return str(int(s))


def read_problem(path) -> Problem:
    """Read and check a problem file.

    Parameters
    ----------
    path : str or Path
        The TOML file; files it names are relative to its folder.

    Returns
    -------
    Problem

    Raises
    ------
    InputError
        Naming the file, the table and key, the bad value and what was expected.
    """
    path = path_argument(path)
    top = Table(load_toml(path), path, "")
    top.only(TOP_KEYS)
    worlds = [w for w in WORLDS if w in top]
    if len(worlds) != 1:
        raise InputError(f"{path}: found {len(worlds)} world tables "
                         f"({', '.join(f'[{w}]' for w in worlds) or 'none'}); expected exactly "
                         "one of [map], [arrays] or [gym]")
    world = worlds[0]
    model = top.table("model", {})
    if "demonstrator" in model:  # the 0.1 name; "demonstrator" now names a person
        raise InputError(f"{model.where('demonstrator')}: renamed q_function (the same "
                         "values, \"soft\" or \"optimal\"): write q_function = "
                         f"{model.data['demonstrator']!r}".replace("'", '"'))
    model.only({"discount", "horizon", "q_function"})
    horizon = model.integer("horizon", None, low=1) if "horizon" in model else None
    if horizon is not None and horizon > MAX_HORIZON:
        raise model.fail("horizon", horizon, f"an integer <= {MAX_HORIZON} (for long tasks "
                         "use an infinite horizon with a discount)")
    if horizon is None:
        discount = model.number("discount", 0.95, low=0.0, high=1.0, high_open=True)
    else:
        discount = model.number("discount", 1.0, low=0.0, high=1.0)
    q_function = model.string("q_function", "soft", choices=("soft", "optimal"))
    build = {"map": arrays_mod.from_map, "arrays": arrays_mod.from_arrays,
             "gym": arrays_mod.from_gym}[world]
    parts = build(top.table(world))
    try:
        mdp = TabularMDP(parts.transitions, parts.features, discount=discount, horizon=horizon,
                         start=parts.start, feature_names=parts.feature_names,
                         grid_shape=parts.grid_shape)
    except InputError as err:
        origin = f" {parts.origin}" if parts.origin else ""
        raise InputError(f"{path}: [{world}]{origin} {err}") from None
    try:
        check_horizon(mdp.horizon, mdp.n_states, mdp.n_actions)
    except InputError as err:
        raise InputError(f"{path}: [model] {err}") from None
    names = tuple(parts.action_names) if parts.action_names else None
    if names is not None and len(names) != mdp.n_actions:
        raise InputError(f"{path}: [{world}] actions: {len(names)} names for "
                         f"{mdp.n_actions} actions")
    features = list(mdp.feature_names)
    rationality, pin = rationality_from(top.table("rationality", {}), features)
    return Problem(
        mdp=mdp, action_names=names, prior=prior_from(top.table("prior", {}), features),
        rationality=rationality, pin=pin, q_function=q_function,
        sampler=sampler_from(top.table("sampler", {})), source=path,
        title=top.string("title", ""), world=world, blocked=frozenset(parts.blocked),
        solver=solver_from(top.table("solver", {})),
        pooling=pooling_from(top.table("pooling", {}), features),
        report=report_from(top.table("report", {})),
        dynamics=dynamics_from(top.table("dynamics")) if "dynamics" in top else None,
        judge=judge_from(top.table("judge", {})),
    )
