"""``python -m host_sim``: see :mod:`host_sim.cli`."""
import sys

from host_sim.cli import main

sys.exit(main())
