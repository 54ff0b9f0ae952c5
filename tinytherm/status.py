"""Status codes of the estimator's answer and verdicts on each reading, and the answer's fields.

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


class Answer:
    """What ``predict`` tells the product: a base class of the estimator, which
    carries these fields itself (all ``None`` when unknown):

    ``status`` (a :mod:`tinytherm.status` code), ``eta_s``, ``eta_low_s``,
    ``eta_high_s`` (seconds after the latest reading; ``eta_high_s`` may be
    ``inf``), ``eta_rel_sd`` (sd of ln eta), ``rate_per_s`` (1/s),
    ``equilibrium_c``, ``ambient_est_c``, ``temp_est_c`` (deg C) and
    ``gain_k_per_s`` (K/s at full duty).

    Its cache (the question the answer was worked out for) is kept by the
    estimator's audits part (:class:`tinytherm.answer.Audits`).
    """

    def clear(self, code):
        self.status = code
        self.eta_s = None
        self.eta_low_s = None
        self.eta_high_s = None
        self.eta_rel_sd = None
        self.rate_per_s = None
        self.equilibrium_c = None
        self.ambient_est_c = None
        self.gain_k_per_s = 0.0
        self.temp_est_c = None

    def arrive(self):
        self.status = ARRIVED
        self.eta_s = 0.0
        self.eta_low_s = 0.0
        self.eta_high_s = 0.0
        self.eta_rel_sd = None  # (as when worked out: a restored run arrives the same)

    def count_down(self, c, age_ms, force=False):
        """Move the cached times on to a fit ``age_ms`` old (``c``: the part holding the
        cache, :class:`tinytherm.answer.Audits`).

        False when the time would pass 0 (the answer must be worked out
        again), unless ``force``: then it stops at 0.
        """
        if self.eta_s is None or self.status == ARRIVED:
            return True
        el = (age_ms - c.age_ms) * 0.001
        if el <= 0.0:
            return True
        eta = self.eta_s - el
        if not eta > 0.0:
            if not force:
                return False
            eta = 0.0
        self.eta_s = eta
        low = self.eta_low_s - el
        self.eta_low_s = low if low > 0.0 else 0.0
        high = self.eta_high_s - el
        self.eta_high_s = high if high > eta else eta
        c.age_ms = age_ms
        return True
