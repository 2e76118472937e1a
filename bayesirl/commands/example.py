"""``bayesirl example NAME DIR``: write a bundled example and run it end to end."""

from __future__ import annotations

import shlex
from pathlib import Path

from bayesirl.errors import InputError
from bayesirl.scenarios.bundled import EXAMPLES


def example_command(args, run_fit) -> int:
    """Write the example's files into ``args.folder`` and fit them into ``folder/run``.

    ``run_fit(argv)`` runs ``bayesirl fit`` with the given arguments (the CLI's entry point).
    """
    if args.list:
        for ex in EXAMPLES.values():
            print(f"{ex.name:<10}{ex.summary}")
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
    problem, demos = EXAMPLES[args.name].write(folder)
    argv = ["fit", str(problem), str(demos), "--out", str(folder / "run")]
    if args.force:
        argv.append("--force")
    if args.quiet:
        argv.insert(0, "--quiet")
    print("running: " + shlex.join(["bayesirl", *argv]), flush=True)
    code = run_fit(argv)
    if code == 0:
        print(f"report: {folder / 'run' / 'report.html'}")
    return code
