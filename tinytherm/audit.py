"""The interval's own evidence: the fit checks its forecasts against what happened.

Three audits watch horizons of 1/8, 1/4 and 1/2 of the fit's age (at least
10, 20 and 40 s). Each records the fitted level, slope and rate when it
starts; once its horizon has passed and the level has moved clearly, it
compares the time the fit's law predicted for the observed change with the
time it took::

    e = ln(took / predicted),  |e| <= ln 8
    var <- var + (e^2 - var) / (n + 1),  n <= AUDIT_MEMORY

starting from :data:`AUDIT_PRIOR_VAR`. :meth:`Audits.var_at` interpolates the
three variances in log horizon for the answer's interval (beyond the longest
audit it grows with the horizon, at most :data:`AUDIT_STRETCH` times).

Runs unchanged on CPython and MicroPython; checks run only at block closes.
"""
import math
import struct

AUDIT_FRACTIONS = (0.125, 0.25, 0.5)  # audit horizons, fractions of the fit's age
AUDIT_MIN_S = (10.0, 20.0, 40.0)      # s: shortest audit horizons
AUDIT_PRIOR_VAR = 0.04  # (log time)^2: forecast error assumed before any audit (20 % sd)
AUDIT_MEMORY = 8        # audits in the running mean of squared log errors
AUDIT_STRETCH = 4.0     # most the longest audit's variance is stretched beyond it
AUDIT_LOG_CAP = 2.0794  # ln 8: one audit counts at most a factor 8
_LN4 = math.log(4.0)


class Audit:
    """One horizon: the forecast waiting to be checked and the running error variance."""

    def __init__(self, fraction, min_s):
        self.fraction = fraction   # horizon as a fraction of the fit's age
        self.min_s = min_s         # shortest horizon, s
        self.var = AUDIT_PRIOR_VAR  # (log time)^2
        self.n = 0                 # checks in the running mean (at most AUDIT_MEMORY)
        self.clear()

    def clear(self):
        """Drop the waiting forecast (the variance is kept)."""
        self.age = -1.0            # fit age at the start, s; < 0: nothing waiting
        self.level = 0.0           # fitted level then, deg C
        self.slope = 0.0           # fitted slope then, deg C/s
        self.rate = 0.0            # fitted k then, 1/s

    def horizon_s(self, age_s):
        """The horizon for a fit ``age_s`` seconds old, s."""
        h = self.fraction * age_s
        return h if h > self.min_s else self.min_s

    def due(self, age_s):
        return self.age < 0.0 or age_s - self.age >= self.horizon_s(self.age)

    def check(self, law, age_s, level, slope, rate, need_c):
        """Learn from the waiting forecast if due, then start a new one.

        ``law.forecast_s(moved_c, level_c, slope, rate)`` gives the seconds the
        answer's law takes for a change (the estimator's own law).
        """
        if self.age >= 0.0:
            took = age_s - self.age
            if took < self.horizon_s(self.age):
                return
            moved = level - self.level
            if moved > need_c or moved < -need_c:
                pred = law.forecast_s(moved, self.level, self.slope, self.rate)
                err = AUDIT_LOG_CAP
                if pred is not None and pred > 0.0:
                    try:
                        err = math.log(took / pred)
                    except (ValueError, OverflowError, ZeroDivisionError):
                        pass
                    if err > AUDIT_LOG_CAP:
                        err = AUDIT_LOG_CAP
                    elif err < -AUDIT_LOG_CAP:
                        err = -AUDIT_LOG_CAP
                if self.n < AUDIT_MEMORY:
                    self.n += 1
                self.var += (err * err - self.var) / (self.n + 1)
        self.age = age_s
        self.level = level
        self.slope = slope
        self.rate = rate


class Audits:
    """The three audits; packs their 15 floats and 3 counts."""

    STATE_SIZE = 3 * (5 * 8 + 1)

    def __init__(self):
        self.a = (Audit(AUDIT_FRACTIONS[0], AUDIT_MIN_S[0]),
                  Audit(AUDIT_FRACTIONS[1], AUDIT_MIN_S[1]),
                  Audit(AUDIT_FRACTIONS[2], AUDIT_MIN_S[2]))

    def reset(self):
        for a in self.a:
            a.var = AUDIT_PRIOR_VAR
            a.n = 0
            a.clear()

    def clear(self):
        """Drop the waiting forecasts (the duty changed, or the fit restarted)."""
        for a in self.a:
            a.clear()

    def any_due(self, age_s):
        """True when at least one audit would act at this age (most blocks: none)."""
        for a in self.a:
            if a.due(age_s):
                return True
        return False

    def var_at(self, eta_s, age_s):
        """Forecast-error variance of ln(eta) at horizon ``eta_s`` s, fit ``age_s`` s old."""
        a0, a1, a2 = self.a
        h0 = a0.horizon_s(age_s)
        h2 = a2.horizon_s(age_s)
        if eta_s <= h0:
            return a0.var
        if eta_s >= h2:
            f = eta_s / h2
            return a2.var * (f if f < AUDIT_STRETCH else AUDIT_STRETCH)
        # the horizons are a factor 2 apart: interpolate on log2(eta / h0)
        pos = math.log(eta_s / h0) / math.log(h2 / h0) * 2.0
        if pos <= 1.0:
            return a0.var + pos * (a1.var - a0.var)
        return a1.var + (pos - 1.0) * (a2.var - a1.var)

    def pack_into(self, buf, offset):
        for a in self.a:
            struct.pack_into("<5dB", buf, offset, a.age, a.level, a.slope, a.rate, a.var, a.n)
            offset += 41

    def unpack_from(self, buf, offset, age_s):
        """Load; False when a value is impossible (the caller resets)."""
        for a in self.a:
            age, level, slope, rate, var, n = struct.unpack_from("<5dB", buf, offset)
            offset += 41
            # (a float32 device rounds the age: allow a few ulps beyond the fit's)
            if not (-1.0 <= age <= age_s * 1.000001 + 0.001 and 0.0 <= var <= 100.0 and n <= AUDIT_MEMORY
                    and -1e6 < level < 1e6 and -1e6 < slope < 1e6 and -1e6 < rate < 1e6):
                return False
            a.age, a.level, a.slope, a.rate, a.var, a.n = age, level, slope, rate, var, n
        return True
