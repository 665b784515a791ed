"""Command-line options shared by every sweep: where the runs go and on what they run."""

from __future__ import annotations

import argparse

__all__ = ["add_sweep_options"]


def add_sweep_options(parser: argparse.ArgumentParser, *, out: str, cold: str, when: str = "") -> None:
    """Add ``--workers N``, ``--scheduler ADDRESS``, ``--timeout SECONDS``, ``--out DIR`` and ``--cold``.

    Args:
        parser: the command's parser.
        out: what ``--out`` defaults to, in words.
        cold: where ``--cold`` starts every run from, in words.
        when: a prefix for each help text (e.g. ``"with --sweep: "``).
    """
    parser.add_argument("--workers", type=int, metavar="N", help=f"{when}run on a local pool of N processes")
    parser.add_argument("--scheduler", metavar="ADDRESS",
                        help=f"{when}run on a running dask.distributed scheduler (the optional 'distributed' extra)")
    parser.add_argument("--timeout", type=float, default=10.0, metavar="SECONDS",
                        help="with --scheduler: how long to wait for the scheduler to answer (default 10)")
    parser.add_argument("--out", metavar="DIR", help=f"{when}the output folder (default: {out})")
    parser.add_argument("--cold", action="store_true",
                        help=f"{when}start every run from {cold} (default: from a neighbouring finished run)")
