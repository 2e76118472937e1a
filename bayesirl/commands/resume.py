"""``bayesirl fit --resume RUNDIR``: continue an interrupted (or killed) run to its draws.

``RUNDIR`` is a run folder marked incomplete; a finished run whose report was interrupted
(its draws are all saved) just gets its report. A run killed outright (SIGKILL, a power cut)
never got to move its folder into place: its state is in the hidden staging folder
``.RUNDIR.partial-XXXX`` beside it, which the run keeps checkpointed every few seconds. When
``RUNDIR`` does not exist, the newest such folder with a checkpoint is resumed; a staging
folder can also be named directly.
"""

from __future__ import annotations

import os
import shutil
from pathlib import Path

from bayesirl.commands.fit import _load, render, sample_into
from bayesirl.commands.runs import say
from bayesirl.errors import InputError
from bayesirl.files import write_json
from bayesirl.io import RunFolder
from bayesirl.io.fields import Table
from bayesirl.io.runfolder import Staging, file_digest
from bayesirl.io.settings import sampler_from
from bayesirl.io.target import owner_alive, partial_of, partials

RECORD = ("problem", "demonstrations", "inputs_sha256", "requested", "command")


def _where(given: Path) -> tuple[Path, Path]:
    """``(source, target)``: the folder to resume from and the run folder to make."""
    target = partial_of(given)
    if target is not None and given.is_dir():
        return given, target
    if os.path.lexists(given):
        return _newer_partial(given) or given, given
    found = partials(given)
    if not found:
        raise InputError(f"{given}: no such run folder (and no interrupted run of that name "
                         f"left a checkpoint in a hidden {given.name}.partial-* folder)")
    return found[0], given


def _newer_partial(given: Path) -> Path | None:
    """A killed resume of ``given`` left a newer checkpoint in a hidden folder: use it."""
    mine = given / "checkpoint"
    if not mine.is_file():
        return None
    newer = [p for p in partials(given) if owner_alive(p) is None
             and (p / "checkpoint").stat().st_mtime > mine.stat().st_mtime]
    return newer[0] if newer else None


def recorded(summary: dict, path: Path) -> dict:
    """The run's record from its summary, checked (a hand-edited summary is refused)."""
    missing = [k for k in RECORD if k not in summary]
    if missing:
        raise InputError(f"{path}: {missing[0]}: missing; the summary cannot resume a run")
    for key in ("problem", "demonstrations", "command"):
        if not isinstance(summary[key], str) or not summary[key]:
            raise InputError(f"{path}: {key} = {summary[key]!r}: expected a file name")
    digests = summary["inputs_sha256"]
    if not (isinstance(digests, dict)
            and all(isinstance(digests.get(k), str) for k in ("problem", "demonstrations"))):
        raise InputError(f"{path}: inputs_sha256 = {digests!r}: expected the inputs' digests")
    requested = summary["requested"]
    if not isinstance(requested, dict):
        raise InputError(f"{path}: requested = {requested!r}: expected the sampler settings")
    sampler_from(Table(requested, path, "requested"))  # every value as the problem file allows
    out = {k: summary[k] for k in RECORD}
    if "comparisons" in summary:  # a run with a comparison file
        if not (isinstance(summary["comparisons"], str)
                and isinstance(digests.get("comparisons"), str)):
            raise InputError(f"{path}: comparisons = {summary['comparisons']!r}: expected a "
                             "file name with its digest")
        out["comparisons"] = summary["comparisons"]
    return out


def _check_inputs(record: dict) -> None:
    for key in ("problem", "demonstrations", "comparisons"):
        if key not in record:
            continue
        path = Path(record[key])
        if not path.is_file():
            raise InputError(f"{path}: the run's {key} file is gone; cannot resume")
        if file_digest(path) != record["inputs_sha256"][key]:
            raise InputError(f"{path}: changed since the run started; resuming would mix "
                             "two problems (start a new fit instead)")


def _render_in_place(args, run: RunFolder, summary: dict) -> int:
    from bayesirl.commands.views import load_posterior, problem_defaults

    posterior = load_posterior(run)
    if not posterior.complete:
        raise InputError(f"{run.posterior}: holds an incomplete run, but {run.summary} says "
                         "complete; the folder was changed by hand")
    say(args, f"{run.root}: sampling had finished; writing the report")
    return render(args, run, posterior, summary, defaults=problem_defaults(summary))


def resume_command(args) -> int:
    """Continue an interrupted run folder to its requested number of draws."""
    source, target = _where(Path(args.resume))
    run = RunFolder(source)
    summary = run.read_summary()
    if source != target:
        pid = owner_alive(source)
        if pid is not None:
            raise InputError(f"{source}: process {pid}, which is still running, is writing "
                             "this run; stop it first (Ctrl-C keeps its draws)")
        say(args, f"resuming from {source}, left by a run of {target} that was stopped "
                  "before it could save")
    elif summary.get("complete"):
        if "report" not in summary:
            return _render_in_place(args, run, summary)
        newer = partials(target)
        hint = (f"; a newer stopped run of it is in {newer[0]} (resume it with bayesirl fit "
                f"--resume {newer[0]})" if newer else "")
        raise InputError(f"{run.root}: the run is already complete; nothing to resume{hint}")
    if not run.checkpoint.exists():
        raise InputError(f"{run.checkpoint}: missing; the run cannot be resumed")
    record = recorded(summary, run.summary)
    _check_inputs(record)
    problem, lik, extra = _load(record["problem"], record["demonstrations"],
                                record.get("comparisons"))
    say(args, f"resuming {target}: {summary.get('draws_done', 0)} of "
              f"{record['requested']['draws']} draws per chain done")
    stage = Staging(target, replace=True, seed_from=source,
                    inputs=(record["problem"], record["demonstrations"]))
    write_json(RunFolder(stage.path).summary, {**summary, "pid": os.getpid()})
    code = sample_into(args, stage, problem, lik, record["requested"], record, resume=True,
                       extra=extra)
    if source != target:  # its state now lives on in target
        shutil.rmtree(source, ignore_errors=True)
    return code
