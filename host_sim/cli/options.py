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


def count_int(minimum):
    """argparse type: an integer >= ``minimum``."""
    def parse(text):
        try:
            value = int(text)
        except ValueError:
            raise argparse.ArgumentTypeError("expected an integer, got %r" % text) from None
        if value < minimum:
            raise argparse.ArgumentTypeError("expected an integer of at least %d, got %r"
                                             % (minimum, text))
        return value
    parse.__name__ = "integer"
    return parse


def add_skip_bad_option(p, default):
    """``--skip-bad`` / ``--no-skip-bad``, the same spelling in every command that reads traces."""
    p.add_argument("--skip-bad", action=argparse.BooleanOptionalAction, default=default,
                   help="skip malformed rows (counted and reported) instead of stopping at "
                        "the first (default: %s; a torn last row after a power loss is one)"
                        % ("skip" if default else "stop"))


def add_unit_options(p, files="the trace's", target=False, checks_help=None):
    """``--fahrenheit`` (``--target-in-f`` with ``target``), ``--time-unit`` and
    ``--no-checks``: one spelling and one meaning in every command that reads
    traces (the hints of :mod:`host_sim.replay.trace_checks` name them).
    ``files``: how the help names the traces; ``checks_help``: what
    ``--no-checks`` lets the command do. Read back with :func:`unit_of` and
    :func:`target_in_c`."""
    p.add_argument("--fahrenheit", action="store_true",
                   help="%s temp_c/ambient_c columns hold deg F" % files)
    if target:
        p.add_argument("--target-in-f", action="store_true",
                       help="with --fahrenheit: the target is in deg F too")
    p.add_argument("--time-unit", choices=TIME_UNITS, default="s",
                   help="unit of %s time_s column (default s); converted to seconds" % files)
    p.add_argument("--no-checks", action="store_true",
                   help=checks_help or "go on even when the sampling or the readings look "
                                       "wrong (the checks every command runs on traces)")


TIME_UNITS = ("s", "ms", "min")


def unit_of(args):
    """"F" with ``--fahrenheit``, else "C": the unit a command shows temperatures in."""
    return "F" if getattr(args, "fahrenheit", False) else "C"


def target_in_c(args, value, option="--target"):
    """A target given on the command line (or in a manifest) in deg C: converted from deg F
    with ``--fahrenheit --target-in-f``; ``--target-in-f`` alone is a :class:`CliError`."""
    in_f = getattr(args, "target_in_f", False)
    if in_f and not getattr(args, "fahrenheit", False):
        raise CliError("--target-in-f needs --fahrenheit (the target is in deg C otherwise)")
    if value is None or not in_f:
        return value
    return (value - 32.0) * 5.0 / 9.0   # deg F -> deg C


# older spellings kept beside the generated ones (README and scripts use them)
OPTION_ALIASES = {"ambient_c": ("--ambient",), "ambient_prior_c": ("--ambient-prior",)}
SET_HELP = ("an estimator or replay setting by name, repeatable: NAME=VALUE with NAME an "
            "argument of the core's ThermalEstimator (finite numbers; true/false; none) or "
            "approach (cool/heat/either), heater (auto/on/off), use_ambient_column "
            "(true/false); e.g. --set interval=0.9 --set heater=off")


def argument_help(estimator_class=None):
    """``{name: first sentence}`` from the estimator's docstring bullets ``- ``name``: ...``."""
    import re
    if estimator_class is None:
        from tinytherm.estimator import ThermalEstimator as estimator_class
    out = {}
    bullets = re.split(r"\n\s*- ", "\n" + (estimator_class.__doc__ or ""))[1:]
    for bullet in bullets:
        head, _, text = bullet.partition(": ")
        text = " ".join(text.split("\n\n")[0].split())
        text = re.sub(r":\w+:`~?([\w.]+)`", lambda m: m.group(1).split(".")[-1], text)
        text = text.replace("``", "")
        sentence = text.split(". ")[0].rstrip(".")
        for name in re.findall(r"``(\w+)``", head):
            out[name] = sentence
    return out


def add_estimator_options(p):
    """The replay settings as options: ``--NAME-WITH-DASHES VALUE`` per estimator argument
    (from its signature), ``--approach``, ``--heater``, ``--ignore-ambient-column`` and
    ``--set NAME=VALUE``; read back with :func:`settings_from_args`."""
    from host_sim.replay.settings import HEATER_MODES, estimator_arguments, kind_of
    g = p.add_argument_group("estimator settings (defaults: the core's own)")
    helps = argument_help()
    metavars = {"bool": "true|false", "int": "N", "float": "X", "float or none": "X",
                "profile": "PROFILE.json", "text": "TEXT"}
    for name, default in estimator_arguments().items():
        if name == "heater":
            continue                       # the replay's --heater auto|on|off below
        kind = kind_of(name, default)
        flags = ("--" + name.replace("_", "-"),) + OPTION_ALIASES.get(name, ())
        text = helps.get(name, "the estimator's %s" % name)
        if name == "ambient_c":
            text += ("; with an ambient_c column in the trace it needs "
                     "--ignore-ambient-column")
        if name == "profile":
            text = ("a vessel profile from `calibrate` (.json, .hex or .bin), used as the "
                    "device would: through its device blob")
        else:
            text += " (core default: %s)" % ("%.6g" % default if isinstance(default, float)
                                              else default)
        g.add_argument(*flags, dest=name, metavar=metavars[kind], default=None,
                       type=_option_type(name, kind), help=text.replace("%", "%%"))
    g.add_argument("--ignore-ambient-column", action="store_true",
                   help="do not pass the trace's ambient_c column to the estimator")
    g.add_argument("--approach", choices=("either", "cool", "heat"), default=None,
                   help="how the product reaches its target: cool (a drink cooling to "
                        "drinkable), heat (a kettle, a bath) or either (default: the "
                        "direction of travel decides; a probe warming up after a pour "
                        "can then read as arrived)")
    g.add_argument("--heater", choices=HEATER_MODES, default=None,
                   help="fit a heater gain from the trace's heater column (default auto: when "
                        "the column exists and has a nonzero duty)")
    add_set_option(g)


def add_set_option(p, flag="--set", help_text=SET_HELP):
    """``--set NAME=VALUE`` (repeatable), the spelling every command that replays shares."""
    p.add_argument(flag, action="append", metavar="NAME=VALUE", default=[],
                   dest=flag.lstrip("-").replace("-", "_"), help=help_text)


def _option_type(name, kind):
    """argparse type for one setting: its value checked now, so the error names the option."""
    from host_sim.replay.settings import parse_value

    def parse(text):
        if kind == "profile":
            return text                    # read once, by ReplaySettings
        try:
            return parse_value(name, kind, text)
        except ValueError as exc:
            raise argparse.ArgumentTypeError(str(exc).replace(name + " must be", "expected")
                                             ) from None
    parse.__name__ = kind
    return parse


def settings_from_args(args, refuse=()):
    """The :class:`host_sim.replay.settings.ReplaySettings` of the options given.

    From the per-argument options, ``--approach``, ``--heater``,
    ``--ignore-ambient-column`` (those that exist on ``args``) and ``--set``
    pairs; a setting given twice, an unknown name, a bad value or a profile
    the device would refuse is a :class:`CliError`. ``refuse``: names this
    command decides itself (an error if given).
    """
    from host_sim.replay.settings import ReplaySettings, estimator_arguments, split_pairs
    given = []
    for name in estimator_arguments():
        if name != "heater" and getattr(args, name, None) is not None:
            given.append((name, getattr(args, name)))
    if getattr(args, "approach", None) is not None:
        given.append(("approach", args.approach))
    if getattr(args, "heater", None) is not None:
        given.append(("heater", args.heater))
    if getattr(args, "ignore_ambient_column", False):
        given.append(("use_ambient_column", False))
    try:
        given += split_pairs(getattr(args, "set", None) or [])
        names = [n for n, _ in given]
        for name in names:
            if names.count(name) > 1:
                raise ValueError("setting %s given twice (an option and --set, or --set twice)"
                                 % name)
            if name in refuse:
                raise ValueError("setting %s: this command decides it itself" % name)
        return ReplaySettings(dict(given), read_profile=read_profile)
    except ValueError as exc:
        raise CliError(str(exc)) from None


def read_profile(path):
    """The VesselProfile in a ``calibrate`` output file, read as the device would read it
    (through its blob); ValueError when it cannot be read or the device would refuse it."""
    from host_sim.calibrate.report import load_profile
    from tinytherm.profile import reason_name
    try:
        prof, reason = load_profile(path)
    except (OSError, ValueError, KeyError, TypeError) as exc:
        raise ValueError("--profile %s: cannot read it (%s)" % (path, exc)) from None
    if prof is None:
        raise ValueError("--profile %s: the device would refuse it (%s)"
                         % (path, reason_name(reason)))
    return prof


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
              "%.0f s in the last %.0f min), with how long before the crossing that holds; "
              "never: the answers near the crossing missed (the last miss is named)"
              % (0.1 * TRUST_FLOOR_S, TRUST_FLOOR_S / 60.0))


def format_trust(figs):
    """Time-to-trust as a reader takes it in, from the figures of
    :func:`host_sim.replay.metrics.error_figures`: the share with how long before the
    crossing the answers hold ("0.997 (the last 8 s)": a share that rounds to 1.00 is
    printed with more digits, never mistaken for "never"), or "never" with the last
    miss ("never (an answer 13 s before the crossing was 38 s off)")."""
    from host_sim.replay.plots import duration_text
    share = figs.get("time_to_trust")
    if share is None:
        return "n/a"
    if figs.get("trusted_for_s") is None:
        before, off = figs.get("trust_miss_before_s"), figs.get("trust_miss_s")
        if before is None:
            return "never"
        if off is None:
            return "never (no answer shown %s before the crossing)" % duration_text(before)
        return "never (an answer %s before the crossing was %s off)" % (
            duration_text(before), duration_text(off))
    text = "%.2f" % share
    if text == "1.00":
        text = "%.3f" % share if "%.3f" % share != "1.000" else ">0.999"
    return "%s (the last %s)" % (text, duration_text(figs["trusted_for_s"]))


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
    """One line of accuracy figures: ``m`` from :func:`host_sim.replay.metrics.error_figures`
    (or ``trace_metrics``), ``trust`` the figures of the time-to-trust call (its floor
    is :data:`TRUST_FLOOR_S`), read by :func:`format_trust`."""
    def f(v, fmt):
        return "n/a" if v is None else fmt % v
    return ("median rel. error %s, p90 %s, time-to-trust %s, interval coverage %s, "
            "no answer on %s of the readings" % (
                f(m["median_rel_error"], "%.3f"), f(m["p90_rel_error"], "%.3f"),
                format_trust(trust), f(m["coverage"], "%.2f"),
                f(m["no_estimate_fraction"], "%.2f")))
