"""World tables of a problem file: ``[map]``, ``[arrays]`` and ``[gym]``."""

from __future__ import annotations

import csv
import io
import math
import zipfile
from pathlib import Path
from typing import NamedTuple

import numpy as np
import scipy.sparse as sp

from bayesirl.errors import InputError
from bayesirl.io.fields import Table, read_text
from bayesirl.io.grid import grid_arrays, parse_map
from bayesirl.model.validate import csr_arrays

# Action names of gymnasium's toy-text environments (from their documentation).
GYM_ACTIONS = {
    "FrozenLake": ("left", "down", "right", "up"),
    "CliffWalking": ("up", "right", "down", "left"),
    "Taxi": ("south", "north", "east", "west", "pickup", "dropoff"),
}
SPARSE_KEYS = ("transitions_data", "transitions_indices", "transitions_indptr")


class World(NamedTuple):
    """The arrays a world table describes (checked later by ``TabularMDP``)."""

    transitions: object
    features: np.ndarray
    feature_names: list[str] | None
    start: np.ndarray | None
    action_names: tuple[str, ...] | None
    grid_shape: tuple[int, int] | None = None
    blocked: tuple[int, ...] = ()
    origin: str = ""  # the data file(s) the arrays came from, for messages


def from_map(table: Table) -> World:
    """A grid world from ``[map]``."""
    grid = parse_map(table)
    p, phi, start = grid_arrays(grid)
    return World(p, phi, grid.features, start, grid.action_names, grid.shape,
                 tuple(grid.cells_with("blocked")))


def read_npz(path: Path) -> dict[str, np.ndarray]:
    """All arrays of an ``.npz`` file (no pickled objects)."""
    try:
        with open(path, "rb") as fh:
            magic = fh.read(4)
    except FileNotFoundError:
        raise InputError(f"{path}: no such file") from None
    except OSError as err:
        raise InputError(f"{path}: cannot be read ({err.strerror or err})") from None
    if magic != b"PK\x03\x04":  # every .npz is a zip archive
        raise InputError(f"{path}: not an .npz archive (numpy.savez writes a zip file of "
                         "arrays; this file is something else)")
    try:
        with np.load(path, allow_pickle=False) as data:
            return {k: data[k] for k in data.files}
    except ValueError as err:
        if "pickle" in str(err):  # object arrays: never unpickled, whatever numpy suggests
            raise InputError(f"{path}: holds arrays of Python objects, which are never "
                             "loaded (they could run code); store numeric arrays") from None
        raise InputError(f"{path}: not a readable .npz archive of numeric arrays ({err})") from None
    except (zipfile.BadZipFile, OSError, EOFError, KeyError, RuntimeError) as err:
        raise InputError(f"{path}: not a readable .npz archive of numeric arrays ({err})") from None


def read_features_csv(path: Path) -> tuple[np.ndarray, list[str]]:
    """Features from a CSV: a header of feature names, then one row of numbers per state."""
    text = read_text(path, "features CSV file")
    reader = csv.reader(io.StringIO(text))
    try:
        rows = list(reader)
    except csv.Error as err:
        raise InputError(f"{path} line {reader.line_num}: not readable as CSV ({err})") from None
    rows = [r for r in rows if any(x.strip() for x in r)]
    if not rows:
        raise InputError(f"{path}: the file is empty; expected a header of feature names "
                         "and one row per state")
    header = [h.strip() for h in rows[0]]
    seen = set()
    for j, h in enumerate(header):
        if not h:
            raise InputError(f"{path} line 1, column {j + 1}: empty feature name")
        if h in seen:
            raise InputError(f"{path} line 1: feature name {h!r} appears more than once")
        seen.add(h)
    if len(rows) == 1:
        raise InputError(f"{path}: only a header; expected one row of features per state")
    out = np.empty((len(rows) - 1, len(header)))
    for i, row in enumerate(rows[1:]):
        line = i + 2
        if len(row) != len(header):
            raise InputError(f"{path} line {line}: {len(row)} values; expected {len(header)} "
                             f"({', '.join(header)})")
        for j, cell in enumerate(row):
            try:
                v = float(cell)
            except ValueError:
                v = None
            if v is None or not math.isfinite(v):
                raise InputError(f"{path} line {line}, column {header[j]!r}: {cell.strip()!r} "
                                 "is not a finite number")
            out[i, j] = v
    return out, header


def from_arrays(table: Table) -> World:
    """``[arrays]``: ``npz`` (transitions, features, start), optional ``features_csv``."""
    table.only({"npz", "features_csv", "feature_names", "actions", "grid"})
    npz_path = table.path("npz")
    data = read_npz(npz_path)
    transitions = _transitions(data, npz_path)
    names = table.strings("feature_names") if "feature_names" in table else None
    if "features_csv" in table:
        if "features" in data:
            raise InputError(f"{table.where('features_csv')}: {npz_path} also holds "
                             "'features'; give the features in one place only")
        if names is not None:
            raise InputError(f"{table.where('feature_names')}: the features CSV's header "
                             "already names the features")
        features, names = read_features_csv(table.path("features_csv"))
    elif "features" in data:
        features = data["features"]
    else:
        raise InputError(f"{npz_path}: no array 'features'; store it in the .npz or give "
                         f"features_csv in [{table.name}]")
    if features.dtype.kind not in "biuf":
        raise InputError(f"{npz_path}: 'features' has dtype {features.dtype}; expected numbers")
    actions = tuple(table.strings("actions")) if "actions" in table else None
    grid = None
    if "grid" in table:
        g = table.data["grid"]
        if not (isinstance(g, list) and len(g) == 2 and all(
                isinstance(x, int) and not isinstance(x, bool) and x > 0 for x in g)):
            raise table.fail("grid", g, "[rows, cols] (two positive integers)")
        n_s = _n_states(transitions)
        if g[0] * g[1] != n_s:
            raise table.fail("grid", g, f"rows x cols equal to the {n_s} states of {npz_path}")
        grid = (g[0], g[1])
    origin = ", ".join(str(p) for p in (npz_path, table.path("features_csv", None)) if p)
    return World(transitions, features, names, data.get("start"), actions, grid,
                 origin=f"(from {origin})")


def _n_states(transitions) -> int:
    return int(transitions.shape[1] if sp.issparse(transitions) else transitions.shape[-1])


def _transitions(data: dict, path: Path):
    sparse = [k for k in (*SPARSE_KEYS, "transitions_n_states") if k in data]
    if "transitions" in data:
        if sparse:
            raise InputError(f"{path}: holds both 'transitions' (dense) and {sparse[0]!r} "
                             "(sparse); give the transitions one way only")
        t = data["transitions"]
        if t.dtype.kind not in "biuf":
            raise InputError(f"{path}: 'transitions' has dtype {t.dtype}; expected numbers")
        return t
    if all(k in data for k in SPARSE_KEYS):
        return _sparse(data, path)
    raise InputError(f"{path}: no array 'transitions' (S, A, S), nor the sparse arrays "
                     f"{', '.join(SPARSE_KEYS)}")


def _sparse(data: dict, path: Path) -> sp.csr_matrix:
    """The CSR transitions, every array checked before scipy or a kernel reads through it."""
    n_s = data.get("transitions_n_states")
    if n_s is None:
        raise InputError(f"{path}: sparse transitions need 'transitions_n_states' too")
    if n_s.shape != () or n_s.dtype.kind not in "iu" or int(n_s) < 1:
        raise InputError(f"{path}: 'transitions_n_states' = {n_s.tolist()!r}; expected one "
                         "positive integer")
    n_s = int(n_s)
    arrays = [data[k] for k in SPARSE_KEYS]
    if arrays[0].dtype == np.float16:  # scipy.sparse has no half precision
        raise InputError(f"{path}: 'transitions_data' has dtype float16; store float32 or "
                         "float64 probabilities")
    try:
        csr_arrays(*arrays, n_s)
    except InputError as err:
        raise InputError(f"{path}: {err}") from None
    indptr = arrays[2]
    if (indptr.size - 1) % n_s or indptr.size == 1:
        raise InputError(f"{path}: 'transitions_indptr' has {indptr.size} entries, so "
                         f"{indptr.size - 1} rows; expected states x actions = {n_s} x A rows")
    return sp.csr_matrix((arrays[0], arrays[1].astype(np.int64), indptr.astype(np.int64)),
                         shape=(indptr.size - 1, n_s))


def from_gym(table: Table) -> World:
    """``[gym]``: ``id``, ``make`` options, features from ``features_csv`` or a ``legend``."""
    table.only({"id", "make", "features_csv", "features", "legend"})
    env_id = table.string("id")
    options = table.table("make", {}).data
    try:
        import gymnasium
    except ImportError:
        raise InputError(f"{table.where('id')}: gymnasium is not installed "
                         "(pip install gymnasium)") from None
    try:
        env = gymnasium.make(env_id, **options)
    except Exception as err:  # gymnasium raises several types for unknown ids and options
        raise InputError(f"{table.where('id')} = {env_id!r}: gymnasium cannot make it "
                         f"({type(err).__name__}: {err})") from None
    from bayesirl.model.gym import gymnasium_transitions

    matrix, start = gymnasium_transitions(env)
    if "features_csv" in table:
        features, names = read_features_csv(table.path("features_csv"))
    elif "legend" in table:
        features, names = _gym_legend(table, env, matrix.shape[1])
    else:
        raise InputError(f"{table.where('features_csv')}: missing; give features_csv or "
                         "features + [gym.legend] (symbols of the environment's map)")
    base = env.unwrapped
    desc = getattr(base, "desc", None)
    shape = tuple(int(x) for x in np.shape(desc)) if desc is not None else None
    actions = GYM_ACTIONS.get(env_id.split("-")[0])
    return World(matrix, features, names, start, actions, shape,
                 origin=f"(from gymnasium {env_id!r})")


def _gym_legend(table: Table, env, n_states: int) -> tuple[np.ndarray, list[str]]:
    desc = getattr(env.unwrapped, "desc", None)
    if desc is None:
        raise InputError(f"{table.where('legend')}: this environment has no map (desc); give "
                         "features_csv instead")
    names = table.strings("features")
    legend = table.table("legend")
    cells = [c.decode() if isinstance(c, bytes) else str(c) for c in np.ravel(desc)]
    rows = []
    for s, ch in enumerate(cells):
        if ch not in legend:
            raise InputError(f"{legend.where(repr(ch))}: missing; map cell {s} has this symbol")
        entry = legend.table(ch)
        entry.only(set(names))
        rows.append([entry.number(f, 0.0) for f in names])
    rows += [[0.0] * len(names)] * (n_states - len(cells))  # an added absorbing state
    return np.asarray(rows, dtype=np.float64), names
