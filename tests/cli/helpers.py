"""Small problem and demonstration files for the command-line tests, and a subprocess runner."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

REPO = Path(__file__).resolve().parents[2]

# A 2 x 3 map: start top-left, a mud cell, one blocked cell and an absorbing water cell.
# With slip 0 every move is deterministic, so a demonstration that jumps is impossible.
TINY_TOML = '''[model]
discount = 0.9

[map]
features = ["mud", "water"]
cells = """
S.m
.#W
"""

[map.legend]
"." = {}
"S" = { start = true }
"m" = { mud = 1 }
"#" = { blocked = true }
"W" = { water = 1, goal = true }

[sampler]
chains = 2
draws = 60
warmup = 60
'''

TINY_CSV = ("episode,step,row,col,action\n"
            "a,0,0,0,right\na,1,0,1,right\na,2,0,2,down\na,3,1,2,\n"
            "b,0,0,0,down\nb,1,1,0,up\nb,2,0,0,right\n")


def cli_env() -> dict:
    """The environment for ``python -m bayesirl`` that runs this checkout's code."""
    env = dict(os.environ)
    env["PYTHONPATH"] = os.pathsep.join(
        [str(REPO)] + ([env["PYTHONPATH"]] if env.get("PYTHONPATH") else []))
    env.setdefault("NUMBA_CACHE_DIR", "/tmp/nbcache-tests")
    return env


def run_subprocess(args, cwd, timeout=120, **kwargs) -> subprocess.CompletedProcess:
    """Run ``python -m bayesirl ARGS`` and capture its output as text."""
    return subprocess.run([sys.executable, "-m", "bayesirl", *map(str, args)], cwd=cwd,
                          env=cli_env(), capture_output=True, text=True, timeout=timeout,
                          **kwargs)


def write_files(folder, files: dict) -> None:
    """Write ``{name: text, bytes or None}`` into ``folder`` (None removes the file)."""
    for name, content in files.items():
        path = folder / name
        path.parent.mkdir(parents=True, exist_ok=True)
        if content is None:
            path.unlink(missing_ok=True)
        elif isinstance(content, bytes):
            path.write_bytes(content)
        else:
            path.write_text(content)
