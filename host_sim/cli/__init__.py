"""The command line: :mod:`host_sim.cli.dispatch` parses and dispatches, one module per command."""
from host_sim.cli.dispatch import main  # noqa: F401  (the entry point tinytherm-sim = host_sim.cli:main)
