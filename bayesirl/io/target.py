"""Where a run folder may be written, and the hidden folders a killed run leaves behind.

Every problem with the output location is found here, before any sampling: an empty name, the
current folder (or one holding it), a place under a regular file or where folders cannot be
made, and - with ``--force`` - anything that is not recognisably a run folder of ours or that
holds the run's own input files. ``--force`` never deletes what we did not make.
"""

from __future__ import annotations

import json
import os
import tempfile
from pathlib import Path

from bayesirl.errors import InputError

RUN_FORMAT = "bayesirl-run/1"
PARTIAL = ".partial-"  # staging folders are named ".NAME.partial-XXXX" beside NAME
MAX_NAME = 200  # bytes: NAME plus ".", ".partial-" and mkdtemp's 8 characters fit in 255


def is_run_folder(path: Path) -> bool:
    """Whether ``path`` is a folder whose ``summary.json`` carries our format tag."""
    if path.is_symlink() or not path.is_dir():
        return False
    try:
        data = json.loads((path / "summary.json").read_text(encoding="utf-8"))
    except (OSError, ValueError, RecursionError):
        return False
    return isinstance(data, dict) and data.get("format") == RUN_FORMAT


def _inside(path: Path, folder: Path) -> bool:
    return path == folder or folder in path.parents


def _existing_ancestor(path: Path) -> Path:
    for p in (path, *path.parents):
        if os.path.lexists(p):
            return p
    return Path("/")


def _probe(where: Path, target) -> None:
    """Make and remove a hidden folder in ``where``: the staging folder will need the same."""
    try:
        os.rmdir(tempfile.mkdtemp(dir=where, prefix=".bayesirl-probe-"))
    except OSError as err:
        raise InputError(f"--out {target}: cannot create a folder in {where} "
                         f"({err.strerror or err}); choose another --out") from None


def check_target(target, replace: bool = False, inputs=()) -> None:
    """Refuse (:class:`InputError`) an output folder that cannot or may not be written.

    Parameters
    ----------
    target : str or Path
        The run folder to create (``--out``).
    replace : bool
        ``--force``: an existing ``target`` may be replaced if it is a run folder (its
        ``summary.json`` has our format tag) and holds none of ``inputs``.
    inputs : iterable of paths
        The run's own input files, which a replacement must never delete.
    """
    text = str(target)
    if not text.strip():
        raise InputError("--out '': empty folder name; give a folder to create, e.g. --out run")
    path = Path(text).expanduser()
    full = Path(os.path.abspath(path))
    cwd = Path.cwd().resolve()
    if full.parent == full or _inside(cwd, full.resolve()):
        raise InputError(f"--out {text}: is the current folder or contains it; give a new "
                         "folder's name, e.g. --out run")
    if len(full.name.encode()) > MAX_NAME:  # the staging folder's name adds ~20 bytes
        raise InputError(f"--out {text[:40]}...: a folder name of {len(full.name.encode())} "
                         f"bytes; at most {MAX_NAME} (file systems allow 255 with the hidden "
                         "staging folder's suffix)")
    base = _existing_ancestor(full.parent)
    if not base.is_dir():
        raise InputError(f"--out {text}: {base} is a file, not a folder; choose another --out")
    if os.path.lexists(full):
        _check_replace(text, full, replace, inputs)
    _probe(base, text)


def _check_replace(text: str, full: Path, replace: bool, inputs) -> None:
    if not replace:
        raise InputError(f"{text}: already exists; choose another --out, add --force to "
                         "replace it, or --resume it if it is an interrupted run")
    if full.is_symlink() or not full.is_dir():
        kind = "a symbolic link" if full.is_symlink() else "a file"
        raise InputError(f"{text}: is {kind}, not a run folder; --force replaces only a run "
                         "folder made by bayesirl fit (remove it yourself if it should go)")
    if os.path.ismount(full):
        raise InputError(f"{text}: is a mount point; it cannot be replaced")
    if not is_run_folder(full):
        raise InputError(f"{text}: not a run folder made by bayesirl fit (its summary.json "
                         f"lacks format {RUN_FORMAT!r}); --force replaces only run folders, "
                         "so choose another --out or remove it yourself")
    for item in inputs:
        if _inside(Path(os.path.abspath(item)).resolve(), full.resolve()):
            raise InputError(f"{text}: holds {item}, an input of this run; --force would "
                             "delete it, so choose another --out")


def partial_of(path: Path) -> Path | None:
    """The run folder a hidden staging folder ``.NAME.partial-XXXX`` was building, or None."""
    name = path.name
    if not (name.startswith(".") and PARTIAL in name):
        return None
    return path.parent / name[1:name.rindex(PARTIAL)]


def partials(target: Path) -> list[Path]:
    """Hidden staging folders of ``target`` holding a checkpoint, newest first."""
    target = Path(os.path.abspath(target))
    if not target.parent.is_dir():
        return []
    found = []
    for p in target.parent.glob(f".{target.name}{PARTIAL}*"):
        ckpt = p / "checkpoint"
        if p.is_dir() and not p.is_symlink() and ckpt.is_file():
            found.append((ckpt.stat().st_mtime, p))
    return [p for _, p in sorted(found, reverse=True)]


def owner_alive(folder: Path) -> int | None:
    """The process id recorded in a staging folder's summary if that process still runs."""
    try:
        pid = json.loads((folder / "summary.json").read_text(encoding="utf-8")).get("pid")
    except (OSError, ValueError, AttributeError, RecursionError):
        return None
    if not isinstance(pid, int) or isinstance(pid, bool) or pid <= 0 or pid == os.getpid():
        return None
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return None
    except OSError:  # exists but belongs to someone else
        return pid
    return pid
