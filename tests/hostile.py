"""Helpers of the hostile-input tests: a small problem, the command line in-process, folder snapshots."""

from __future__ import annotations

from contin.commands._cli import main

#: An invented hinge-latch balance, u**3 - u + p = 0, with a spare parameter q; traces in well under a second.
PROBLEM = """\
[unknowns]
u = 1.3247
[parameters]
p = -1.0
q = 2.0
[equations]
balance = "u**3 - u + p"
[trace]
free = "p"
bounds = { p = [-1.0, 1.0] }
step = 0.1
max_step = 0.2
"""


def run(capsys, *words):
    """(exit status, stdout, stderr) of ``contin WORDS...`` run in this process."""
    code = main(list(words))
    captured = capsys.readouterr()
    return code, captured.out, captured.err


def snapshot(root):
    """Every path under ``root``, relative and sorted."""
    return sorted(str(p.relative_to(root)) for p in root.rglob("*"))
