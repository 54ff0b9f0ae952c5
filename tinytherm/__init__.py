"""tinytherm: time-to-target for heated and cooled liquids, on microcontrollers.

The on-device core: import the modules you need (``tinytherm.estimator``,
``tinytherm.model``, ``tinytherm.status``, ...); importing the package itself
loads nothing else, so a device pays only for what it uses.
"""
__version__ = "0.1.0"
