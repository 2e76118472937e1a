"""``bayesirl example NAME DIR``: write a bundled example and run it end to end."""

from __future__ import annotations

import shlex
import shutil
import tempfile
from pathlib import Path

from bayesirl.errors import InputError
from bayesirl.files import atomic_target
from bayesirl.io.target import check_target
from bayesirl.scenarios.bundled import EXAMPLES


def example_command(args, run_fit) -> int:
    """Write the example's files into ``args.folder`` and fit them into ``folder/run``.

    ``run_fit(argv)`` runs ``bayesirl fit`` with the given arguments (the CLI's entry point).
    """
    if args.list:
        # Pad to the longest name, so a long name never runs into its summary.
        width = max(len(e.name) for e in EXAMPLES.values()) + 2
        for ex in EXAMPLES.values():
            print(f"{ex.name:<{width}}{ex.summary}")
        return 0
    if args.name is None or args.folder is None:
        raise InputError("example: give a NAME and a folder, e.g. bayesirl example park "
                         f"park-demo (names: {', '.join(EXAMPLES)}; see --list)")
    if args.name not in EXAMPLES:
        raise InputError(f"example: unknown example {args.name!r}; choose from "
                         f"{', '.join(EXAMPLES)}")
    folder = Path(args.folder)
    if folder.exists() and not folder.is_dir():
        raise InputError(f"{folder}: exists and is not a folder")
    if (folder / "run").exists() and not args.force:
        raise InputError(f"{folder / 'run'}: already exists; add --force to replace it, or "
                         "choose another folder")
    check_target(folder / "run", args.force)  # before any file is written
    problem, demos, *more = _write_example(EXAMPLES[args.name], folder)
    argv = ["fit", str(problem), str(demos), "--out", str(folder / "run")]
    if more:  # a comparison file
        argv += ["--comparisons", str(more[0])]
    if args.force:
        argv.append("--force")
    if args.quiet:
        argv.insert(0, "--quiet")
    print("running: " + shlex.join(["bayesirl", *argv]), flush=True)
    code = run_fit(argv)
    if code == 0:
        print(f"report: {folder / 'run' / 'report.html'}")
    return code


def _same(mine: Path, fresh: Path) -> bool:
    if not mine.is_file():
        return False
    if fresh.suffix == ".npz":  # the archive's bytes carry timestamps; compare the arrays
        import numpy as np

        try:
            with np.load(mine, allow_pickle=False) as a, np.load(fresh) as b:
                return sorted(a.files) == sorted(b.files) and all(
                    np.array_equal(a[k], b[k]) for k in a.files)
        except (OSError, ValueError, EOFError):
            return False
    return mine.read_bytes() == fresh.read_bytes()


def _write_example(example, folder: Path) -> tuple[Path, ...]:
    """Write the example's files into ``folder``; a different file of that name is refused."""
    with tempfile.TemporaryDirectory() as tmp:
        inputs = example.write(Path(tmp))
        fresh = sorted(Path(tmp).iterdir())
        for path in fresh:
            mine = folder / path.name
            if mine.exists() and not _same(mine, path):
                raise InputError(f"{mine}: already exists and is not the example's file; "
                                 "choose another folder (nothing was written)")
        folder.mkdir(parents=True, exist_ok=True)
        for path in fresh:
            with atomic_target(folder / path.name) as target:
                shutil.copyfile(path, target)
    return tuple(folder / p.name for p in inputs)
