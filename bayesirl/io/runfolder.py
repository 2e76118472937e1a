"""Run folders: built in a temporary sibling folder and renamed into place, never half-written.

A run folder holds ``posterior.nc`` (the draws, readable by ``arviz.from_netcdf``),
``summary.json`` (how the run was made, whether it finished, and every number of the report)
and ``report.html``; an interrupted run also keeps ``checkpoint`` (the sampler's state) and is
marked ``"complete": false``.
"""

from __future__ import annotations

import hashlib
import json
import os
import shutil
import tempfile
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path

from bayesirl.errors import InputError

RUN_FORMAT = "bayesirl-run/1"
DIR_MODE = 0o755  # mkdtemp makes 0700 folders; runs are meant to be shared


@dataclass(frozen=True)
class RunFolder:
    """The file names inside a run folder."""

    root: Path

    @property
    def posterior(self) -> Path:
        """The posterior draws (NetCDF)."""
        return self.root / "posterior.nc"

    @property
    def summary(self) -> Path:
        """The JSON summary."""
        return self.root / "summary.json"

    @property
    def report(self) -> Path:
        """The HTML report."""
        return self.root / "report.html"

    @property
    def checkpoint(self) -> Path:
        """The sampler checkpoint of an interrupted run."""
        return self.root / "checkpoint"

    @property
    def suggestions(self) -> Path:
        """Ranked extra demonstrations (from ``bayesirl suggest``)."""
        return self.root / "suggestions.json"

    def read_summary(self) -> dict:
        """``summary.json``, checked to be a run summary."""
        if not self.root.is_dir():
            raise InputError(f"{self.root}: no such run folder")
        try:
            data = json.loads(self.summary.read_text(encoding="utf-8"))
        except FileNotFoundError:
            raise InputError(f"{self.summary}: missing; {self.root} is not a run folder "
                             "(made by bayesirl fit)") from None
        except (json.JSONDecodeError, UnicodeDecodeError) as err:
            raise InputError(f"{self.summary}: not valid JSON ({err})") from None
        if not isinstance(data, dict) or data.get("format") != RUN_FORMAT:
            got = data.get("format") if isinstance(data, dict) else None
            raise InputError(f"{self.summary}: format {got!r}; expected {RUN_FORMAT!r}")
        return data


def file_digest(path) -> str:
    """SHA-256 of a file's bytes (to notice inputs changed before a resume)."""
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def check_target(target, replace: bool = False) -> None:
    """An existing ``target`` is an :class:`InputError` unless it may be replaced."""
    if Path(target).exists() and not replace:
        raise InputError(f"{target}: already exists; choose another --out, add --force to "
                         "replace it, or --resume it if it is an interrupted run")


@contextmanager
def staged_folder(target, replace: bool = False, seed_from=None) -> Iterator[Path]:
    """Yield a fresh temporary sibling of ``target``; on success it becomes ``target``.

    Parameters
    ----------
    target : str or Path
        The folder to create.
    replace : bool
        Replace an existing ``target`` (it is moved aside first and removed only after the new
        folder is in place). Without it an existing ``target`` is an :class:`InputError`.
    seed_from : Path, optional
        Copy this folder's files into the staging folder first (for a resumed run).

    On an exception the staging folder is removed and ``target`` is left as it was.
    """
    target = Path(target)
    check_target(target, replace)
    target.parent.mkdir(parents=True, exist_ok=True)
    tmp = Path(tempfile.mkdtemp(dir=target.parent, prefix=f".{target.name}.partial-"))
    try:
        if seed_from is not None:
            shutil.copytree(seed_from, tmp, dirs_exist_ok=True)
        yield tmp
        os.chmod(tmp, DIR_MODE)
        _swap_into_place(tmp, target)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise


def _swap_into_place(tmp: Path, target: Path) -> None:
    if not target.exists():
        os.replace(tmp, target)
        return
    old = Path(tempfile.mkdtemp(dir=target.parent, prefix=f".{target.name}.old-"))
    os.rmdir(old)
    os.replace(target, old)
    try:
        os.replace(tmp, target)
    except BaseException:
        os.replace(old, target)  # put the previous run back
        raise
    shutil.rmtree(old, ignore_errors=True)
