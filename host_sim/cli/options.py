"""Helpers every command shares: argument types, the estimator options, output and truth checks.

One place for them, so that ``replay``, ``benchmark``, ``calibrate`` and
``fleet`` meet the same bar.
"""
import argparse
import json
import math
import os

SAFETY_NOTE = ("Note: an estimate is never a safety interlock. Hot liquids scald; check "
               "serving and food temperatures with a calibrated thermometer and follow local "
               "codes; heaters need an independent thermal cut-out.")

def finite_float(text):
    """argparse type: a finite float (nan and inf are refused)."""
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError("expected a number, got %r" % text) from None
    if not math.isfinite(value):
        raise argparse.ArgumentTypeError("expected a finite number, got %r" % text)
    return value


def positive_float(text):
    """argparse type: a finite float > 0."""
    value = finite_float(text)
    if not value > 0.0:
        raise argparse.ArgumentTypeError("expected a number above 0, got %r" % text)
    return value


def seed_int(text):
    """argparse type: a non-negative integer seed."""
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError("expected a non-negative integer, got %r"
                                         % text) from None
    if value < 0 or value >= 2 ** 32:
        raise argparse.ArgumentTypeError("expected a non-negative integer below 2**32, got %r"
                                         % text)
    return value


def add_estimator_options(p):
    g = p.add_argument_group("estimator settings (defaults: the core's own)")
    g.add_argument("--ambient", type=finite_float, metavar="C", default=None,
                   help="known constant ambient, deg C (default: use the trace's ambient_c "
                        "column if any, else estimate it); with an ambient_c column it "
                        "needs --ignore-ambient-column")
    g.add_argument("--ignore-ambient-column", action="store_true",
                   help="do not pass the trace's ambient_c column to the estimator")
    g.add_argument("--ambient-prior", type=finite_float, metavar="C", default=None,
                   help="prior centre for an estimated ambient, deg C")
    g.add_argument("--interval", type=finite_float, metavar="P", default=None,
                   help="two-sided probability of the ETA interval, e.g. 0.8")
    g.add_argument("--profile", metavar="PROFILE.json", default=None,
                   help="a vessel profile from `calibrate` (.json, .hex or .bin), used "
                        "exactly as the device would: through its device blob")
    g.add_argument("--approach", choices=("either", "cool", "heat"), default="either",
                   help="how the product reaches its target: cool (a drink cooling to "
                        "drinkable), heat (a kettle, a bath) or either (default: the "
                        "direction of travel decides; a probe warming up after a pour "
                        "can then read as arrived)")
    g.add_argument("--heater", choices=("auto", "on", "off"), default="auto",
                   help="fit a heater gain from the trace's heater column (auto: when the "
                        "column exists and has a nonzero duty)")


def estimator_kwargs(args):
    """Settings the user gave (None = the core's default), checked against the core."""
    import inspect
    from tinytherm.estimator import ThermalEstimator
    kw = {"interval": args.interval, "ambient_prior_c": args.ambient_prior}
    kw = {k: v for k, v in kw.items() if v is not None}
    known = inspect.signature(ThermalEstimator.__init__).parameters
    for name in kw:
        if name not in known:
            raise ValueError("this version of the estimator has no setting %s" % name)
    if getattr(args, "profile", None):
        from host_sim.calibrate.report import load_profile
        from tinytherm.profile import reason_name
        try:
            prof, reason = load_profile(args.profile)
        except (OSError, ValueError, KeyError) as exc:
            raise ValueError("--profile %s: cannot read it (%s)" % (args.profile, exc))
        if prof is None:
            raise ValueError("--profile %s: the device would refuse it (%s)"
                             % (args.profile, reason_name(reason)))
        kw["profile"] = prof
    approach = {"cool": -1, "heat": 1}.get(getattr(args, "approach", "either"), 0)
    if approach:
        kw["approach"] = approach  # for predict(), see host_sim.replay.replay.replay_rows
    return kw


class CliError(ValueError):
    """A user error: :func:`host_sim.cli.dispatch.main` prints it as one line ``error: ...``
    and exits with status 2."""


# Time-to-trust as the CLI prints it: the share of the approach (first reading to
# the crossing) after which every shown answer stays within TRUST_TOLERANCE of the
# true time left, measured against max(time left, TRUST_FLOOR_S). With the error
# floor of 30 s the last 30 s asked for 3 s, about one 0.0625 C step at the end of
# a mug's approach (0.02 K/s) and a block of the fit (20 s) long: no estimator can
# meet it, so every trace read 1.00. 120 s asks for 12 s in the last two minutes:
# several sensor steps and well inside a countdown shown in whole minutes.
TRUST_FLOOR_S = 120.0
TRUST_HELP = ("time-to-trust: share of the approach (first reading to the crossing) after "
              "which every shown answer stays within 10 %% of the true time left (within "
              "%.0f s in the last %.0f min); 1.00 = never" % (0.1 * TRUST_FLOOR_S,
                                                               TRUST_FLOOR_S / 60.0))


def check_finite(value, option):
    if value is not None and not math.isfinite(value):
        raise CliError("%s must be a finite number, got %r" % (option, value))
    return value


def check_output(path, option, suffix=None, inputs=()):
    """An output path we can create: its folder exists, it is not a folder or an input."""
    if suffix is not None and not path.lower().endswith(suffix):
        raise CliError("%s %s: the file name must end with %s (a PNG image is written)"
                       % (option, path, suffix))
    folder = os.path.dirname(os.path.abspath(path))
    if not os.path.isdir(folder):
        raise CliError("%s %s: folder %s does not exist (create it first)"
                       % (option, path, folder))
    if os.path.isdir(path):
        raise CliError("%s %s: is a folder; give a file name" % (option, path))
    for other in inputs:
        if other and os.path.exists(other) and os.path.exists(path) \
                and os.path.samefile(other, path):
            raise CliError("%s %s would overwrite the input %s" % (option, path, other))


def load_truth(path, target_c):
    """(crossing_s or None) from a scenario truth JSON checked against ``target_c``."""
    try:
        with open(path, encoding="utf-8") as handle:
            truth = json.load(handle)
    except FileNotFoundError:
        raise CliError("--truth %s: no such file" % path) from None
    except IsADirectoryError:
        raise CliError("--truth %s: is a folder, not a truth JSON" % path) from None
    except (UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise CliError("--truth %s: not a truth JSON from 'scenario' (%s)"
                       % (path, str(exc).split(":")[0])) from None
    except (OSError, RecursionError, ValueError) as exc:
        raise CliError("--truth %s: cannot read (%s)" % (path, exc)) from None
    if not isinstance(truth, dict) or "crossing_time_s" not in truth:
        raise CliError("--truth %s: no crossing_time_s entry (write it with 'scenario "
                       "--truth')" % path)
    crossing = truth["crossing_time_s"]
    if crossing is not None and (isinstance(crossing, bool) or not isinstance(
            crossing, (int, float)) or not math.isfinite(crossing) or crossing < 0):
        raise CliError("--truth %s: crossing_time_s must be a non-negative number or null, "
                       "got %r" % (path, crossing))
    tgt = truth.get("target_c")
    if tgt is not None:
        if isinstance(tgt, bool) or not isinstance(tgt, (int, float)) \
                or not math.isfinite(tgt):
            raise CliError("--truth %s: target_c must be a number, got %r" % (path, tgt))
        if abs(tgt - target_c) > 1e-6:
            raise CliError("--truth %s is for target %.4g C but --target is %.4g C: its "
                           "crossing belongs to another target (pass --target %.4g, or "
                           "drop --truth)" % (path, tgt, target_c, tgt))
    return None if crossing is None else float(crossing)


def show_temp(value_c, unit):
    """A deg C value as the user's unit: '60.0 C' or '140.0 F'."""
    value, name = (value_c * 9.0 / 5.0 + 32.0, "F") if unit == "F" else (value_c, "C")
    return ("%.1f %s" if abs(value) < 1e6 else "%.3g %s") % (value, name)

def format_accuracy(m, trust):
    def f(v, fmt):
        return "n/a" if v is None else fmt % v
    return ("median rel. error %s, p90 %s, time-to-trust %s, interval coverage %s, "
            "no answer on %s of the readings" % (
                f(m["median_rel_error"], "%.3f"), f(m["p90_rel_error"], "%.3f"),
                f(trust, "%.2f"), f(m["coverage"], "%.2f"),
                f(m["no_estimate_fraction"], "%.2f")))
