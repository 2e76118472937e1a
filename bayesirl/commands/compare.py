"""``bayesirl compare RUN RUN ...``: which model predicts left-out episodes best."""

from __future__ import annotations

from pathlib import Path

from bayesirl.commands.views import load_posterior
from bayesirl.errors import InputError
from bayesirl.io import RunFolder


def compare_command(args) -> int:
    """Print the comparison table and its conclusion; exit 2 for runs on different data."""
    from bayesirl.modelfit import compare
    from bayesirl.posterior.loglik import is_current

    if len(args.runs) < 2:
        raise InputError("compare: give at least two run folders")
    runs, names = [], []
    for path in args.runs:
        run = RunFolder(Path(path))
        posterior = load_posterior(run)
        if posterior.n_draws == 0:
            raise InputError(f"{run.root}: the run has no draws yet")
        if not is_current(posterior.log_likelihood, posterior.model):  # older runs
            posterior.compute_log_likelihood()
            posterior.save(run.posterior)  # atomic; adds the group for the next time
        runs.append(posterior)
        names.append(Path(path).name or str(path))
    result = compare(runs, names, refit=args.refit, over=getattr(args, "over", "episodes"))
    print(result.table())
    return 0
