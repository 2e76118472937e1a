"""Hostile inputs for the command line: problem, demonstration and run-folder files of our own.

Each builder returns ``{relative path: text, bytes or None}`` to write into a fresh folder
that already holds the tiny map problem (``tiny.toml``) and its demonstrations
(``walks.csv``). A ``[arrays]`` world of 10 states and 2 actions (a ring: action 0 stays,
action 1 moves on) is available through :func:`ring`.
"""

from __future__ import annotations

import io
import json

import numpy as np

from .helpers import TINY_CSV, TINY_TOML

N_S, N_A = 10, 2


def toml(old: str, new: str) -> dict:
    """The tiny problem with one edit (the edit must apply)."""
    assert old in TINY_TOML, old
    return {"tiny.toml": TINY_TOML.replace(old, new, 1)}


def sampler(line: str) -> dict:
    """The tiny problem with one more ``[sampler]`` line."""
    return toml("[sampler]\n", f"[sampler]\n{line}\n")


def demos(old: str, new: str) -> dict:
    """The tiny demonstrations with one edit."""
    assert old in TINY_CSV, old
    return {"walks.csv": TINY_CSV.replace(old, new, 1)}


def jsonl(*episodes) -> dict:
    """A JSON Lines demonstration file ``w.jsonl`` of the given raw lines."""
    return {"w.jsonl": "\n".join(e if isinstance(e, str) else json.dumps(e)
                                 for e in episodes) + "\n"}


def ring_arrays() -> dict[str, np.ndarray]:
    """Valid sparse arrays of the ring world (CSR rows ``s*A + a``)."""
    indices = np.array([[s, (s + 1) % N_S] for s in range(N_S)]).ravel()
    return {"transitions_data": np.ones(N_S * N_A),
            "transitions_indices": indices.astype(np.int64),
            "transitions_indptr": np.arange(N_S * N_A + 1, dtype=np.int64),
            "transitions_n_states": np.array(N_S),
            "features": np.column_stack([np.arange(N_S) / N_S, np.ones(N_S)])}


def npz_bytes(arrays: dict) -> bytes:
    buf = io.BytesIO()
    np.savez(buf, **arrays)
    return buf.getvalue()


RING_TOML = '[model]\ndiscount = 0.9\n[arrays]\nnpz = "ring.npz"\n{extra}\n'
RING_CSV = "episode,step,state,action\na,0,0,1\na,1,1,1\na,2,2,0\n"


def ring(extra: str = "", drop=(), **arrays) -> dict:
    """The ring world with some arrays replaced (or dropped) and extra ``[arrays]`` lines."""
    data = {k: v for k, v in ring_arrays().items() if k not in drop}
    data.update(arrays)
    return {"tiny.toml": RING_TOML.format(extra=extra), "ring.npz": npz_bytes(data),
            "ring.csv": RING_CSV}


def ring_with(name: str, change) -> dict:
    """The ring world with ``change(array)`` applied to one array."""
    a = ring_arrays()[name].copy()
    return ring(**{name: change(a)})


def _set(index, value, dtype=None):
    def change(a):
        a = a.astype(dtype) if dtype is not None else a
        a[index] = value
        return a
    return change


def nested_json(depth: int) -> str:
    return '{"states": [0], "actions": [' + "[" * depth + "]" * depth + "]}"


def summary(**fields) -> str:
    base = {"format": "bayesirl-run/1", "complete": False}
    base.update(fields)
    return json.dumps(base)


RECORD = {"problem": "tiny.toml", "demonstrations": "walks.csv",
          "inputs_sha256": {"problem": "0" * 64, "demonstrations": "0" * 64},
          "requested": {"chains": 2, "draws": 60, "warmup": 60, "seed": 0, "method": "nuts",
                        "max_depth": 10, "dense_mass": False},
          "command": "bayesirl fit tiny.toml walks.csv"}


def resume_folder(**changes) -> dict:
    """A run folder ``r`` with a checkpoint and a summary record with some fields changed."""
    record = {**RECORD, **changes}
    record = {k: v for k, v in record.items() if v is not None}
    return {"r/summary.json": summary(**record), "r/checkpoint": b"not used"}


def run_folder(tag="bayesirl-run/1", extra=None) -> dict:
    """A folder ``run`` whose summary carries ``tag`` (ours or not), plus ``extra`` files."""
    files = {"run/summary.json": json.dumps({"format": tag, "complete": True})}
    files.update(extra or {})
    return files
