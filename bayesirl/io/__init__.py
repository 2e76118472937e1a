"""Files: problem descriptions (TOML), demonstrations (CSV, JSON Lines) and run folders."""

from bayesirl.io.demofiles import read_demonstrations, write_demonstrations
from bayesirl.io.problem import Problem, read_problem
from bayesirl.io.runfolder import RunFolder, staged_folder
from bayesirl.io.writer import write_problem

__all__ = [
    "Problem",
    "RunFolder",
    "read_demonstrations",
    "read_problem",
    "staged_folder",
    "write_demonstrations",
    "write_problem",
]
