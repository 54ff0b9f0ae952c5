"""Command line: ``python -m host_sim`` or the ``tinytherm-sim`` console script.

Subcommands:

- ``replay TRACE.csv --target C --out PRED.csv [--plot OUT.png]``: feed a
  trace through the on-device estimator, write one prediction row per input
  row, print accuracy metrics when the trace crosses the target;
- ``scenario KIND --seed N --out trace.csv [--truth truth.json]``: generate a
  seeded physical scenario;
- ``demo [--plot demo.png]``: generate an invented scenario, stream it through
  the estimator printing the evolving time-to-target, write a PNG;
- ``benchmark --seeds tune|holdout|both``: the accuracy benchmark against
  batch baselines;
- ``calibrate TRACE.csv ... --out PROFILE.json``: learn a vessel profile;
- ``fleet MANIFEST.csv --out RESULTS.csv``: replay many traces on a cluster.

This module parses and dispatches; each command lives in its own module of
:mod:`host_sim.cli` (its ``add_parser`` and ``cmd_*``), the helpers they share
in :mod:`host_sim.cli.options`.
"""
import argparse
import sys

from host_sim.cli import benchmark, calibrate, demo, fleet, replay, scenario
from host_sim.cli.options import SAFETY_NOTE, CliError
from tinytherm import __version__

COMMANDS = (replay, scenario, demo, benchmark, fleet, calibrate)


def build_parser():
    """The ``tinytherm-sim`` parser with every command's subparser."""
    p = argparse.ArgumentParser(
        prog="tinytherm-sim",
        description="Replay temperature traces through the tinytherm estimator on a PC, "
                    "generate physical test scenarios, and benchmark accuracy.",
        epilog=SAFETY_NOTE)
    p.add_argument("--version", action="version", version="%(prog)s " + __version__)
    sub = p.add_subparsers(dest="command", metavar="COMMAND")
    sub.required = True
    for command in COMMANDS:
        command.add_parser(sub)
    return p


def main(argv=None):
    """Entry point; returns the process exit code.

    A command reports a user error by raising :class:`CliError`: one line
    ``error: ...`` on stderr and exit status 2, the same for every command.
    Output piped into a reader that stops early (``| head``) ends the command
    quietly with status 141, as a shell reports SIGPIPE.
    """
    args = build_parser().parse_args(argv)
    try:
        code = args.func(args)
        sys.stdout.flush()          # a closed pipe shows here, not at interpreter exit
        return code
    except CliError as exc:
        print("error: %s" % exc, file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:
        # the reader of our output left (`... | head`): stop quietly, as the Python docs'
        # note on SIGPIPE advises (stdout to devnull so the exit flush does not fail too)
        import os
        try:
            os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        except (OSError, ValueError):      # stdout is no file (a test's capture)
            pass
        return 141
