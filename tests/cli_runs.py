"""Run `python -m stepfence ... --json` in child processes at once and collect the JSON.

The command line is the outside route several API and page tests compare against; this is the
one place that starts it.
"""
from __future__ import annotations

import json
import subprocess
import sys


def start(runs: dict) -> dict:
    """Start `stepfence ARGS` for every key -> ARGS (a list of strings, without --json)."""
    return {k: subprocess.Popen([sys.executable, "-m", "stepfence", *args, "--json"],
                                stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
            for k, args in runs.items()}


def collect(procs: dict, timeout: float = 180) -> dict:
    """Wait for every process of start(); each must exit 0 and print JSON."""
    out = {}
    for k, p in procs.items():
        text, err = p.communicate(timeout=timeout)
        assert p.returncode == 0, (k, err[-2000:])
        out[k] = json.loads(text)
    return out


def run(runs: dict, timeout: float = 180) -> dict:
    """start() then collect()."""
    return collect(start(runs), timeout)
