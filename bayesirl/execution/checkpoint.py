"""Checkpoint files: every chain's sampler state in one ``.npz``, with a JSON header.

Layout (``numpy.load(path, allow_pickle=False)`` reads it; nothing is pickled):

* ``header``: a JSON string with the format name, the run's identity (a fingerprint of
  the problem and prior, the seed, the number of chains, the sampler settings), whether
  the run is complete, and per chain either null (not started) or the chain's scalars
  (iteration, counters, the bit generator's state, time spent).
* ``c{k}.{name}``: chain ``k``'s arrays (position, gradient, adaptation state, metric,
  draws and statistics so far, and the likelihood's warm starts under ``lik.``).

Files are replaced atomically (written beside the target, then renamed), so an interrupted
write leaves the previous checkpoint intact.
"""

from __future__ import annotations

import hashlib
import json
import time
import zipfile
from pathlib import Path

import numpy as np

from bayesirl.errors import InputError
from bayesirl.execution.chains import ChainRecord
from bayesirl.files import atomic_target
from bayesirl.posterior import storage
from bayesirl.posterior.model import PosteriorModel

FORMAT = "bayesirl-checkpoint/1"


def identity(model: PosteriorModel, settings: dict, seed: int, chains: int) -> dict:
    """What must match for a resume: fingerprint of the problem and prior, seed, settings."""
    arrays, _ = storage.problem_arrays(model)
    digest = hashlib.sha256()
    described = {"likelihood": type(model.likelihood).__qualname__,
                 "problem": storage.problem_meta(model), "model": model.spec()}
    digest.update(json.dumps(described, sort_keys=True).encode())
    for name in sorted(arrays):
        a = np.ascontiguousarray(arrays[name])
        digest.update(f"{name}:{a.dtype.str}:{a.shape}".encode())
        digest.update(a.tobytes())
    return {"fingerprint": digest.hexdigest(), "seed": int(seed), "chains": int(chains),
            "settings": dict(settings)}


def save(path: Path, run: dict, records: list[ChainRecord | None], complete: bool) -> Path:
    """Write the checkpoint atomically."""
    header = {"format": FORMAT, **run, "complete": bool(complete), "written": time.time(),
              "numpy": np.__version__,
              "records": [None if r is None else r.meta for r in records]}
    arrays = {"header": np.array(json.dumps(header, sort_keys=True))}
    for k, record in enumerate(records):
        if record is not None:
            arrays.update({f"c{k}.{name}": v for name, v in record.arrays.items()})
    with atomic_target(path) as tmp, open(tmp, "wb") as fh:
        np.savez(fh, **arrays)
    return Path(path)


def read(path: Path) -> tuple[dict, list[ChainRecord | None]]:
    """The header and the chain records of a checkpoint file."""
    path = Path(path)
    if not path.is_file():
        raise InputError(f"checkpoint {path}: no such file to resume from")
    try:
        with np.load(path, allow_pickle=False) as z:
            header = json.loads(str(z["header"]))
            arrays = {name: z[name] for name in z.files if name != "header"}
    except (OSError, ValueError, KeyError, zipfile.BadZipFile) as exc:
        raise InputError(f"checkpoint {path}: not a readable checkpoint ({exc})") from None
    if header.get("format") != FORMAT:
        raise InputError(f"checkpoint {path}: format {header.get('format')!r}, expected "
                         f"{FORMAT!r}")
    records = []
    for k, meta in enumerate(header["records"]):
        prefix = f"c{k}."
        own = {n[len(prefix):]: v for n, v in arrays.items() if n.startswith(prefix)}
        records.append(None if meta is None else ChainRecord(meta, own))
    return header, records


def load(path: Path, run: dict) -> list[ChainRecord | None]:
    """The chain records, after checking the checkpoint belongs to this very run.

    Raises
    ------
    InputError
        When the file is missing or unreadable, or was written for a different problem,
        prior, seed, number of chains or sampler settings.
    """
    header, records = read(path)
    where = f"checkpoint {path}"
    if header["fingerprint"] != run["fingerprint"]:
        raise InputError(f"{where} was written for a different problem (MDP, demonstrations, "
                         "likelihood, prior, rationality or pin); refusing to resume")
    for key in ("seed", "chains"):
        if header[key] != run[key]:
            raise InputError(f"{where}: {key} was {header[key]!r}, this run has "
                             f"{run[key]!r}; resume with the same {key}")
    saved, now = header["settings"], run["settings"]
    for key in sorted(set(saved) | set(now)):  # both ways: "start" is absent by default
        if saved.get(key) != now.get(key):
            raise InputError(f"{where}: {key} was {saved.get(key)!r}, this run has "
                             f"{now.get(key)!r}; resume with the same settings")
    return records
