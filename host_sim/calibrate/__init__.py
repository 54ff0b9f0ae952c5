"""The calibration room: fit a vessel profile from recorded uses (see :mod:`host_sim.calibrate.pipeline`)."""
