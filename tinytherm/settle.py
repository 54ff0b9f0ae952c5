"""Arrivals with no direction given: the part that keeps a probe still meeting the liquid from arriving.

A product that does not tell ``predict`` how it reaches its target (``approach``
0) leaves the direction to the readings, and the readings' first minutes may be
the probe's, not the liquid's. With no heater on, an arrival also needs:

- **the probe to have met the liquid.** A strap-on or clip-on probe attached at
  the air's temperature (or a cold probe put in a hot drink) travels to the
  liquid's temperature over a few of its own time constants and may cross the
  target on the way. :class:`Settle` keeps one reading. For the fit's first
  :data:`SETTLE_S` it is the fit's first reading, and an arrival needs it
  already past the target (the probe never showed the liquid short of it); after
  ``SETTLE_S``, until the block that closes after it, none if the fit has bent
  through ``SETTLE_BEND`` (that block restarts it: the probe travelled).
  Then (the first block closed ``SETTLE_S`` into the fit, or a fit seeded at a
  turn, where the probe has met the liquid) it is that block's closing
  reading (a fit seeded at a turn read a block apart: from its third reading
  the one after the seed, which may have been a spike or the last reading
  before a pour; ``ThermalEstimator._finish_block``): an arrival needs it
  short of the target (the crossing came after), or, falling, the reading
  and the fitted level moved on past the target by
  4 noise sd (at least ``answer.ARRIVE_TOL_C``: a liquid past its target when
  the probe met it, still going that way; the level, not one reading of
  hundreds hovering there; a rise past it then is a probe still rising after
  a pour). A fit bent through :data:`SETTLE_BEND` of its time constants by then
  was the probe travelling: the estimator restarts it there. While the fit
  may still be a slow probe's travel (the readings' own rate, with no prior on
  it, bends it through more than
  ``SETTLE_BEND`` in ``SETTLE_S`` and it has more than that move left to
  where it levels off, or that rate came from three readings; or the fit holds
  two readings, minutes apart: they show no bend) the reference waits (:data:`TRAVEL`: no
  arrival) for a later block; a fit restarted after the travel with the travel
  still left waits until it is within the move, however little the fit then bends. A fit restarted at a
  jump has no reference until the probe settles.
- **a fall to stay above the known air** (measured, or given): a passive liquid
  below its air only warms, so a fitted level more than a move beyond the noise
  (``answer.move_c``) below it is a probe strapped on at the air still travelling
  down to a cold drink, however slow (no number chosen). Not for a rise: a
  liquid heated with no duty column given rises past its air.
- **a rise to be the liquid's** (a probe warming after a pour or a top-up passes
  a drinking target on its way up while the drink is hotter): the fit at least
  :data:`RISE_ARRIVE_MIN_S` old, still rising by its slope and by the latest
  reading (at most :data:`RISE_DROP_SD` noise sd below the extreme), and bent
  through at most :data:`RISE_BEND` of its time constants (``k x age``: a probe
  warmed to the drink levels off).
- **a time while the probe still travels** away from the target after a jump
  (:meth:`Settle.carried`): the liquid's law from before it, carried on from
  where the probe's fit levels off, plus the probe's lag; before that level is
  known, an interval from where the probe is now to beyond that level (no
  number chosen).

The constants are leave-one-family-out choices on the tune seeds of
``benchmarks/families.py`` (docs/benchmarks.md). A clip-on probe reading partly
the air and a probe's lag of tens of seconds to minutes are common practice, no source.
Runs unchanged on CPython and MicroPython.
"""
import math

from tinytherm import answer
from tinytherm.fit import SCALE, to_counts

SETTLE_S = 300.0          # s: a probe may take this long to meet the liquid (300 and 600 tie,
#   900 does worse)
SETTLE_BEND = 1.0         # time constants (k x SETTLE_S): a fit bent through more was the
#   probe travelling to the liquid (1, 2, 3 and 5 tried)
RISE_ARRIVE_MIN_S = 300.0  # s: no rising arrival in a fit younger than this (probe lag)
RISE_BEND = 3.0           # no rising arrival in a fit bent through more time constants
RISE_DROP_SD = 3.0        # ... nor with the latest reading this many noise sd below the extreme
PAIR_SD = 2.53            # noise sd beyond the hold line's level on each of two readings in a row:
#   the false rate of one reading beyond answer.move_c's 4 sd (normal tails, Phi(-2.53)^2 =
#   Phi(-4) = 3.2e-5; derived, not chosen)
SETTLE_MS = int(SETTLE_S * 1000)
RISE_ARRIVE_MIN_MS = int(RISE_ARRIVE_MIN_S * 1000)
_INV = 1.0 / SCALE
_TOL = int(answer.ARRIVE_TOL_C * SCALE)  # counts
LIMIT_COUNTS = 10001 * SCALE  # beyond any reading (the guard's limits are within 1e4 C)
NO_REF = LIMIT_COUNTS - 1  # the reference after a jump: no reading shows the liquid yet
#   (the probe still travels to it; the estimator asks for it too)
TRAVEL = LIMIT_COUNTS - 2  # the reference while a strap-on probe may still travel to the liquid
TRAVEL_ON = LIMIT_COUNTS - 3  # ... in a fit restarted after its travel: until within the move


def _law_time_s(a, target_c, from_c):
    """The time (s) until ``target_c`` (deg C) under the law the audit ``a`` kept (its level,
    slope and rate), for the liquid now at ``from_c`` (deg C); None when the target is not
    between ``from_c`` and where that law levels off."""
    r = a.rate
    return answer.time_to_target_from_slope_s(target_c - from_c, a.slope + r * (a.level - from_c), r)


class Settle:
    """The settle reference: a reading in counts, and whether the probe has met the liquid."""

    STATE_SIZE = 4  # int32: the reference x 2, plus 1 while settling

    def __init__(self):
        self.ref = 0          # counts: the fit's first reading, then the settle reading
        self.settled = False
        self.turn = False     # the fit began with two readings at a turn (saved by the header)

    def first(self, c):
        """The fit's first reading (counts): settling, with it as the reference."""
        self.ref = c
        self.settled = False
        self.turn = False

    def jumped(self):
        """The fit restarted at a jump (a pour, a top-up): its first reading may be the
        probe on its way to the new liquid, no reference until it settles."""
        self.ref = NO_REF

    def carried(self, est, target_c, level_c, slope, k):
        """The answer while the probe still travels to the liquid after a jump, away from
        ``target_c`` (deg C), its fit's ``level_c`` (deg C), ``slope`` (deg C/s) and ``k``
        (1/s, the probe's rate: its travel dominates the fit). The probe levels off at the
        liquid, ``L = level + slope / k``; the liquid follows the law fitted before the jump
        (kept by the longest audit: level ``T0``, slope ``s0``, rate ``r``) and the probe
        crosses the target its lag ``1 / k`` after it (a first-order probe on a slow ramp)::

            eta = -ln(1 - r (target - L) / s_L) / r + 1 / k,   s_L = s0 - r (L - T0)

        With ``L`` known within a move beyond the noise (``answer.move_c``, as the turn; its
        sd from the fit's k, ``|slope| / k^2 sd(k)``: the slope and the level are measured
        far better than k while the probe bends), ``r`` off by ``answer.RATE_MODEL_SD`` of
        itself (a fitted rate's model error) gives the interval. Before, the liquid is at
        least as far from the target as the probe now (it still travels to it): the lower
        end is the time from ``level_c``, the upper end the time from ``L`` its z sd further
        on (none when that never arrives), the point the time from ``L`` within them.
        Sets ``TRACKING`` with the time and its bounds (s) and ``eta_rel_sd`` (the sd of
        ln eta: the rate's model error, or the interval's width over 2 z), or leaves the answer."""
        a = est.audits.a[2]
        if self.ref != NO_REF or not a.rate > 0.0:
            return
        m = answer.move_c(est.noise.sd) * k * k
        v = slope * slope * est.reg.pkk  # (L's variance times k^4)
        top = level_c + slope / k
        f = answer.spread(est.audits.z * answer.RATE_MODEL_SD)
        eta = _law_time_s(a, target_c, top)
        if v <= m * m:
            if eta is None:
                return
            eta += 1.0 / k
            lo = eta / f
            hi = eta * f
            rel = answer.RATE_MODEL_SD
        else:
            lo = _law_time_s(a, target_c, level_c)
            if lo is None:
                return
            lo /= f
            hi = _law_time_s(a, target_c, top + est.audits.z * v ** 0.5 / (k * k)
                             * (1.0 if slope > 0.0 else -1.0))
            hi = math.inf if hi is None else hi * f
            if eta is None or eta < lo:
                eta = lo
            elif eta > hi:
                eta = hi
            # (the sd of ln eta the interval stands for: its width over 2 z)
            rel = (math.inf if hi == math.inf or not lo > 0.0
                   else math.log(hi / lo) / (2.0 * est.audits.z))
        est.status = answer.st.TRACKING
        est.eta_s = eta
        est.eta_low_s = lo
        est.eta_high_s = hi
        est.eta_rel_sd = rel

    def seeded(self, turn, ref=0):
        """The fit starts where the probe has met the liquid (its reference): at a turn,
        seeded with the two readings there (``turn``), or after the probe's travel, ``ref``
        the reference before the restart: :data:`TRAVEL`, the travel still left, the
        reference waits (:data:`TRAVEL_ON`: no reference yet)."""
        self.settled = True
        self.turn = turn
        if ref == TRAVEL:
            self.ref = TRAVEL_ON

    def reseed(self, cb):
        """The reference moves to reading ``cb`` (counts), the one after a turn's seed (a
        seed may be a spike the guard passed, or the last reading before a pour), unless it
        waits while the probe may still travel (:data:`TRAVEL`, :data:`TRAVEL_ON`)."""
        if self.ref < TRAVEL_ON:
            self.ref = cb

    def block_closed(self, age_ms, cb, k, reg, slope, noise_sd_c, n):
        """A block closed ``age_ms`` into the fit at reading ``cb`` (counts); ``k`` (1/s) and
        ``slope`` (deg C/s, at the level) the fit's as solved before it, from ``n`` readings
        with this block's; the readings' own rate, this block's in, with no prior on it
        (from the sums of ``reg``, the fit's :class:`tinytherm.fit.Regression`, without an
        air column: the rate prior is a liquid's, and with noisy or coarse readings it holds
        a slow probe's bend at a fraction of it) judges the travel. True when the probe is
        taken as settled with it and the fit bent through more than :data:`SETTLE_BEND`
        time constants: restart the fit here. The reference waits (:data:`TRAVEL`, no
        arrival) while the probe may still travel: the fit's level more than a move
        (``answer.move_c`` of the noise sd ``noise_sd_c``, deg C) away from where it levels
        off (``|slope| / k``: the travel left, were the bend the probe's) and its rate
        bending it through more than ``SETTLE_BEND`` in ``SETTLE_S``, or k solved from three
        readings, or the fit restarted after the probe's travel with the travel still left
        (:data:`TRAVEL_ON`: until it is within the move, however little it bends); and while
        the fit holds two readings (k unsolved: readings minutes apart; they show no bend)."""
        ref = self.ref
        if age_ms < SETTLE_MS or (self.settled and ref != TRAVEL and ref != TRAVEL_ON):
            return False
        kf = k
        if k and not reg.heater:  # (the readings' own rate: the fit's k with no prior on it)
            kf = reg.rate_free()
            if kf is None:
                kf = k
        travel = n < 3 or (kf > 0.0 and (slope if slope > 0.0 else -slope)
                           > kf * answer.move_c(noise_sd_c)
                           and (ref == TRAVEL_ON or kf * SETTLE_MS > SETTLE_BEND * 1000.0 or n < 4))
        if self.settled:  # (waiting: the reference once the probe met the liquid)
            if not travel:
                self.ref = cb
            return False
        self.ref = TRAVEL if travel else cb
        self.settled = True
        return k * age_ms > SETTLE_BEND * 1000.0

    def allows(self, est, target_c, m, age_ms):
        """False when an arrival at ``target_c`` (deg C) in direction ``m`` (+1 / -1), the
        fit ``age_ms`` old, may be the probe's and not the liquid's (no direction given)."""
        b = est.blocks
        if est.heater and b.uc > 0:
            return True  # (a move the heater drives is the liquid's)
        ref = self.ref
        target = to_counts(target_c)
        if ref == TRAVEL or ref == TRAVEL_ON:
            return False  # (the probe may still travel to the liquid)
        mv = answer.move_c(est.noise.sd)
        a = est._ambient_ahead_c() if m < 0 else None
        if a is not None and a - b.level > mv:
            return False  # (falling below the air it warms toward: the probe's travel)
        if not self.settled:
            if ref == NO_REF or (ref - target) * m < 0 or (
                    age_ms >= SETTLE_MS and est.reg.k * age_ms > SETTLE_BEND * 1000.0):
                return False  # (past SETTLE_S and bent: the block closing next restarts it)
        elif (target - ref) * m <= 0:
            if m > 0 or self.turn:
                # (a rise past the target before the probe settled: a pour's; or a fit
                # begun at a turn short of the target: the liquid never reached it)
                return False
            if (b.level - ref * _INV) * m < mv or (b.c - ref) * m < to_counts(mv):
                return False  # (the fitted level too: not one reading of hundreds)
        return m < 0 or not (
            age_ms < RISE_ARRIVE_MIN_MS or not est._slope > 0.0
            or est.reg.k * age_ms > RISE_BEND * 1000.0
            or b.c * _INV < est._extreme_c() - RISE_DROP_SD * est.noise.sd)

    def backed_off(self, est, m):
        """True when the latest reading, or one the guard holds as a possible spike (a top-up's
        first, until the next confirms it), is back beyond the hold line (the answer's cache,
        ``hold_c``, counts) against the direction ``m`` (+1 / -1): a lagging probe rising
        after a top-up, no arrival. The line is as far from the open block's mean when that
        is further on (the drink went on past the extreme since the last block closed: a
        line from the extreme alone is late). Also when the latest two readings are both back
        beyond a line :data:`PAIR_SD` noise sd from that level (at least ``ARRIVE_TOL_C``):
        two readings in a row beyond it are as rare by noise as one beyond the hold line's 4 sd
        (a probe with a step near its noise moves a step at a time: 0.5 C steps, sd 0.2 C)."""
        b = est.blocks
        hold = est.audits.hold_c
        lv = b.ext_sy // b.ext_n  # (the level the line is drawn from; integer counts: no heap)
        if b.n >= answer.HOLD_OPEN_N:
            line = b.sy // b.n + hold - lv
            if (line - hold) * m > 0:
                hold = line
                lv = b.sy // b.n
        if (b.c - hold) * m < 0:
            return True
        # two readings in a row back from the level by PAIR_SD noise sd (at least ARRIVE_TOL_C;
        # the float work only once both are back by that least)
        if (b.c - lv) * m < -_TOL and (b.cq - lv) * m < -_TOL:
            h = to_counts(PAIR_SD * est.noise.sd)
            if h < _TOL:
                h = _TOL
            if (b.c - lv) * m < -h and (b.cq - lv) * m < -h:
                return True
        x = est.guard.held_c()
        return x is not None and (to_counts(x) - hold) * m < 0
