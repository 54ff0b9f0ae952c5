"""PC-side tools for tinytherm: trace I/O, physical scenarios, replay, metrics, plots.

Needs the ``sim`` extra (numpy, scipy, matplotlib). The on-device core in
``tinytherm/`` never imports this package. Command line: ``python -m host_sim``.
"""
