"""Paired rounds for benchmarks on a shared machine.

A figure and its reference are measured one after the other in each round, so that a load
that comes and goes touches both; the row reports the median ratio over the rounds with its
minimum and maximum. Times are CPU times (user + system) of a child process, which a busy
neighbour inflates much less than wall time, and the child's own peak resident memory comes
with them (``os.wait4``).
"""

from __future__ import annotations

import os
import statistics
import subprocess
import sys
from dataclasses import dataclass


@dataclass(frozen=True)
class ChildCost:
    """What one child process cost."""

    cpu: float
    """User plus system CPU time. [s]"""
    peak_memory: float
    """Peak resident set size. [MiB]"""


def child_cost(argv, cwd=None, env=None) -> ChildCost:
    """Run ``argv`` to completion and return its CPU time and peak memory.

    Raises
    ------
    RuntimeError
        If the command fails (its standard error is quoted).
    """
    process = subprocess.Popen(
        argv, cwd=cwd, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE
    )
    _, status, usage = os.wait4(process.pid, 0)
    stderr = process.stderr.read().decode(errors="replace") if process.stderr else ""
    process.stderr.close()
    process.returncode = os.waitstatus_to_exitcode(status)
    if process.returncode != 0:
        raise RuntimeError(f"{' '.join(map(str, argv))} failed ({process.returncode}):\n"
                           f"{stderr[-2000:]}")
    # ru_maxrss is in KiB on Linux
    return ChildCost(cpu=usage.ru_utime + usage.ru_stime, peak_memory=usage.ru_maxrss / 1024)


def python(*args) -> list[str]:
    """The argv of this interpreter running ``args``."""
    return [sys.executable, *map(str, args)]


def paired(subject, reference, rounds: int, measure=lambda cost: cost.cpu):
    """Measure ``subject()`` and ``reference()`` (each returning a :class:`ChildCost`) in
    ``rounds`` paired rounds.

    Returns
    -------
    dict
        ``value`` and ``reference_value`` (medians of ``measure``), ``ratio`` (the median of
        the per-round ratios), ``ratio_min``, ``ratio_max`` and ``rounds``.
    """
    values, references, ratios = [], [], []
    for _ in range(rounds):
        a = measure(subject())
        b = measure(reference())
        values.append(a)
        references.append(b)
        ratios.append(a / b)
    return {
        "value": statistics.median(values),
        "reference_value": statistics.median(references),
        "ratio": statistics.median(ratios),
        "ratio_min": min(ratios),
        "ratio_max": max(ratios),
        "rounds": rounds,
    }


def verdict(ratio: float, limit: float) -> str:
    """'yes' when the median ratio is within ``limit``, else 'no'."""
    return "yes" if ratio <= limit else "no"
