"""The core's texts: what a refused argument says and how a part prints itself.

Loaded only when one is needed (an argument refused, a ``repr``): each text
kept in the module that raises it was a string object on the device's heap
since the import (about 3 KB of the smallest heap with the reprs,
benchmarks/device_budget.py). Each name below a text is the argument it
refuses (:func:`tinytherm.num.refused` makes the ``ValueError``). Runs
unchanged on CPython and MicroPython.
"""

# the estimator's arguments (tinytherm.estimator.ThermalEstimator)
min_temp_c = "min_temp_c < max_temp_c must be finite deg C within +-1e4"
ambient_c = "ambient_c must be None or a temperature in [min_temp_c, max_temp_c]"
ambient_prior_c = "ambient_prior_c must be a finite temperature (deg C)"
ambient_prior_sd_c = "ambient_prior_sd_c must be in [0.1, 1e4] deg C"
heater = "heater must be True or False"
interval = "interval must be a probability in [0.01, 0.999]"
probe_codes = "probe_codes must be True or False"
quantum_c = "quantum_c must be in [1e-6, 10] deg C"
restart_gap_s = "restart_gap_s must be in [1, 5e5] seconds"
# the guard's (tinytherm.guard.ReadingGuard): any number setting, then the others
setting = "%s must be a number in [%r, %r] %s, got %r"
min_c = "need min_c < max_c (deg C), got %r, %r"
spike_window = "spike_window must be 0 (off), 3 or 5, got %r"
# the change detector's (tinytherm.change.ChangeDetector)
drift = "drift must be > 0 (standard deviations), got %r"
threshold = "threshold must be > 0 (standard deviations), got %r"
z_clip = "z_clip must be > drift (%r), got %r"
scale_n = "scale_n must be an int >= 0 (readings), got %r"
jump_z = "jump_z must be > z_clip (%r) or None, got %r"
# tinytherm.num.normal_quantile
p = "p must be in (0, 1)"


def estimator(e):
    """``repr`` of a :class:`tinytherm.estimator.ThermalEstimator`."""
    from tinytherm.status import status_name
    return "ThermalEstimator(readings=%d, status=%s, k=%s, equilibrium_c=%s, eta_s=%s)" % (
        e.readings, status_name(e.status), e.rate_per_s, e.equilibrium_c, e.eta_s)


def guard(g):
    """``repr`` of a :class:`tinytherm.guard.ReadingGuard`."""
    return ("ReadingGuard(min_c=%r, max_c=%r, quantum_c=%r, spike_window=%r, spike_k=%r, "
            "probe_codes=%r, accepted=%d, rejected=%d)" % (
                g.min_c, g.max_c, g.quantum_c, g.spike_window, g.spike_k,
                g.probe_codes, g.accepted, g.rejected))


def detector(d):
    """``repr`` of a :class:`tinytherm.change.ChangeDetector`."""
    return ("ChangeDetector(drift=%r, threshold=%r, z_clip=%r, scale_n=%r, jump_z=%r, "
            "alarms=%d)" % (d.drift, d.threshold, d.z_clip, d.scale_n, d.jump_z, d.alarms))
