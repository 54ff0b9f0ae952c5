"""Status codes of the estimator's answer and verdicts on each reading.

Small integers so that firmware can compare and store them without
allocating; ``STATUS_NAMES`` and ``VERDICT_NAMES`` give the lower-case names
used in logs and CSV output.
"""
try:
    from micropython import const
except ImportError:  # CPython
    def const(x):
        return x

# --- status of the answer (what the firmware shows) ---
GATHERING = const(0)     # too few readings for any estimate yet
SETTLING = const(1)      # an estimate exists but is still too uncertain to show
TRACKING = const(2)      # a trustworthy time-to-target is available
ARRIVED = const(3)       # the liquid is at or past the target
OUT_OF_REACH = const(4)  # the target lies beyond where the liquid levels off
SENSOR_FAULT = const(5)  # recent readings were rejected; no estimate is given
DISTURBED = const(6)     # a sudden change (top-up, lid off) was seen; re-learning

STATUS_NAMES = (
    "gathering",
    "settling",
    "tracking",
    "arrived",
    "out_of_reach",
    "sensor_fault",
    "disturbed",
)

# --- verdict on one reading passed to update() ---
ACCEPTED = const(0)        # used for the estimate
NOT_FINITE = const(1)      # NaN or infinity
OUT_OF_RANGE = const(2)    # outside the configured physical range
ERROR_CODE = const(3)      # a known sensor error code (e.g. power-up value)
TIME_BACKWARDS = const(4)  # time step negative
DUPLICATE_TIME = const(5)  # time step zero
SPIKE = const(6)           # a single-sample outlier
STUCK = const(7)           # the sensor has reported the exact same value too long
BAD_INPUT = const(8)       # another argument (ambient, duty, dt) is unusable

VERDICT_NAMES = (
    "accepted",
    "not_finite",
    "out_of_range",
    "error_code",
    "time_backwards",
    "duplicate_time",
    "spike",
    "stuck",
    "bad_input",
)


def status_name(code):
    """Lower-case name of a status code; ``"unknown"`` for anything else."""
    if 0 <= code < len(STATUS_NAMES):
        return STATUS_NAMES[code]
    return "unknown"


def verdict_name(code):
    """Lower-case name of a reading verdict; ``"unknown"`` for anything else."""
    if 0 <= code < len(VERDICT_NAMES):
        return VERDICT_NAMES[code]
    return "unknown"
