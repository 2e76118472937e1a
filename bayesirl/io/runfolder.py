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
from bayesirl.io.target import RUN_FORMAT, check_target

__all__ = ["RUN_FORMAT", "RunFolder", "Staging", "check_target", "file_digest",
           "staged_folder"]

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
        except RecursionError:
            raise InputError(f"{self.summary}: nested too deeply to be a run summary") from None
        except OSError as err:
            raise InputError(f"{self.summary}: cannot be read ({err.strerror or err})") from None
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


class Staging:
    """A fresh hidden sibling ``.NAME.partial-XXXX`` of ``target`` that becomes ``target``.

    Parameters
    ----------
    target : str or Path
        The folder to create.
    replace : bool
        Replace an existing ``target`` (it must be a run folder: see :func:`check_target`;
        it is moved aside first and removed only after the new folder is in place).
    seed_from : Path, optional
        Copy this folder's files into the staging folder first (for a resumed run).
    inputs : iterable of paths
        The run's input files, which must not lie inside a ``target`` to be replaced.
    """

    def __init__(self, target, replace: bool = False, seed_from=None, inputs=()) -> None:
        self.target = Path(target)
        check_target(self.target, replace, inputs)
        try:
            self.target.parent.mkdir(parents=True, exist_ok=True)
            self.path = Path(tempfile.mkdtemp(dir=self.target.parent,
                                              prefix=f".{self.target.name}.partial-"))
        except OSError as err:
            raise InputError(f"--out {self.target}: cannot create it "
                             f"({err.strerror or err})") from None
        try:
            if seed_from is not None:
                shutil.copytree(seed_from, self.path, dirs_exist_ok=True)
        except BaseException:
            self.discard()
            raise

    def commit(self) -> None:
        """Rename the staging folder to ``target`` (replacing the old one)."""
        os.chmod(self.path, DIR_MODE)
        try:
            _swap_into_place(self.path, self.target)
        except OSError as err:  # the results stay where they are: tell the user where
            raise InputError(f"{self.target}: cannot be put in place ({err.strerror or err});"
                             f" the run is kept in {self.path}") from None

    def discard(self) -> None:
        """Remove the staging folder."""
        shutil.rmtree(self.path, ignore_errors=True)


@contextmanager
def staged_folder(target, replace: bool = False, seed_from=None) -> Iterator[Path]:
    """Yield a fresh temporary sibling of ``target``; on success it becomes ``target``.

    See :class:`Staging`. On an exception the staging folder is removed and ``target`` is
    left as it was.
    """
    stage = Staging(target, replace, seed_from)
    try:
        yield stage.path
    except BaseException:
        stage.discard()
        raise
    stage.commit()


def _swap_into_place(tmp: Path, target: Path) -> None:
    if not os.path.lexists(target):
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
