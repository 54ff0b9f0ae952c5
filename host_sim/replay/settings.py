"""How a trace is replayed: one settings object for every command.

:class:`ReplaySettings` holds what the user chose, checked once, for
``replay``, ``benchmark``, ``fleet`` and ``calibrate`` alike:

- the estimator's keyword arguments. Their names, and the kind of value each
  takes, come from the signature of ``ThermalEstimator.__init__``
  (:func:`estimator_arguments`): an argument the core drops is gone here too,
  and one it adds can be set without a change here. The kind follows the
  default: a bool takes a yes/no word, an int an integer, a float (or None) a
  finite number (or ``none``); ``profile`` takes a VesselProfile, its blob,
  or a file from ``calibrate`` when a reader is given (the command line's
  reads it through its device blob).
- the replay's own settings (:data:`REPLAY_SETTINGS`): ``approach`` for
  ``predict()`` (cool, heat or either), ``heater`` (auto, on or off; the
  estimator's ``heater`` argument follows from it and the trace) and
  ``use_ambient_column`` (pass the trace's ambient_c cells with each reading).

Values come as text (``NAME=VALUE`` pairs, command-line options) or as Python
values; numbers must be finite, names must be known. Ranges are the
estimator's to check: :meth:`ReplaySettings.estimator` builds it and turns
its refusal into a ValueError.
"""
import inspect
import math

# the replay's own settings and their defaults; ``heater`` replaces the estimator's bool
REPLAY_SETTINGS = {"approach": 0, "heater": "auto", "use_ambient_column": True}
APPROACH_WORDS = {"cool": -1, "either": 0, "heat": 1}
HEATER_MODES = ("auto", "on", "off")
_TRUE = ("true", "yes", "on", "1")
_FALSE = ("false", "no", "off", "0")


def estimator_arguments(estimator_class=None):
    """``{name: default}`` of the estimator's keyword arguments, in signature order.

    ``estimator_class``: the class to read (default: the installed core's
    :class:`tinytherm.estimator.ThermalEstimator`).
    """
    if estimator_class is None:
        from tinytherm.estimator import ThermalEstimator as estimator_class
    out = {}
    for name, par in inspect.signature(estimator_class.__init__).parameters.items():
        if name == "self" or par.kind in (par.VAR_POSITIONAL, par.VAR_KEYWORD):
            continue
        out[name] = None if par.default is par.empty else par.default
    return out


def kind_of(name, default):
    """How a setting's value is read: "profile", "bool", "int", "float",
    "float or none" or "text", from the name and its default."""
    if name == "profile":
        return "profile"
    if isinstance(default, bool):
        return "bool"
    if isinstance(default, int):
        return "int"
    if isinstance(default, float):
        return "float"
    if default is None:
        return "float or none"
    return "text"


def _finite(name, value):
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise ValueError("%s must be a number, got %r" % (name, value))
    value = float(value)
    if not math.isfinite(value):
        raise ValueError("%s must be a finite number, got %r" % (name, value))
    return value


def parse_value(name, kind, value):
    """``value`` (text or a Python value) as a setting of ``kind``; ValueError if it is not one.

    ``kind``: as :func:`kind_of` returns, or ``name`` itself for the replay's
    own settings (``approach``, ``heater``, ``use_ambient_column``).
    """
    text = value.strip() if isinstance(value, str) else None
    low = text.lower() if text is not None else None
    if kind == "approach":
        if low is not None:
            if low in APPROACH_WORDS:
                return APPROACH_WORDS[low]
            if low in ("-1", "0", "1", "+1"):
                return int(low)
        elif value in (-1, 0, 1) and not isinstance(value, (bool, float)):
            return int(value)
        raise ValueError("approach must be cool, heat or either (or -1, 1, 0), got %r" % (value,))
    if kind == "heater":
        if value is None or low == "auto":
            return "auto"
        if value is True or low in _TRUE:
            return "on"
        if value is False or low in _FALSE:
            return "off"
        raise ValueError("heater must be auto, on or off, got %r" % (value,))
    if kind in ("bool", "use_ambient_column"):
        if value is True or value is False:
            return value
        if low in _TRUE or low in _FALSE:
            return low in _TRUE
        raise ValueError("%s must be true or false, got %r" % (name, value))
    if kind == "int":
        if low is not None:
            try:
                return int(text)
            except ValueError:
                raise ValueError("%s must be an integer, got %r" % (name, value)) from None
        if isinstance(value, int) and not isinstance(value, bool):
            return value
        raise ValueError("%s must be an integer, got %r" % (name, value))
    if kind in ("float", "float or none"):
        if kind == "float or none" and (value is None or low == "none"):
            return None
        if low is not None:
            try:
                value = float(text)
            except ValueError:
                raise ValueError("%s must be a number, got %r" % (name, text)) from None
        return _finite(name, value)
    if kind == "profile":
        return value          # a file name (read by ReplaySettings), a VesselProfile or its blob
    return value if low is None else text


class ReplaySettings:
    """The settings of one replay: the estimator's arguments plus the replay's own.

    ``values``: a dict ``{name: value}`` or an iterable of ``"NAME=VALUE"``
    texts (values as text or Python values, see :func:`parse_value`); a name
    given twice is an error. ``arguments``: ``{name: default}`` of the
    estimator these settings are for (default: the installed core's,
    :func:`estimator_arguments`); a fleet's other core passes its own.
    ``read_profile``: ``path -> VesselProfile`` for a ``profile`` given as a
    file name (the command line passes the reader of ``calibrate``'s files,
    which ValueErrors a file the device would refuse); without it only a
    VesselProfile or its blob is taken. Raises ValueError naming the setting
    for an unknown name, a value of the wrong kind, a NaN or infinity.

    Attributes: ``approach`` (-1 cool, +1 heat, 0 either: for ``predict``),
    ``heater`` ("auto", "on" or "off"), ``use_ambient_column`` (bool),
    ``given`` (dict of every setting given, checked; ``profile`` as the
    profile read), ``profile_path`` (the profile's file name, or None),
    ``arguments`` (the estimator's ``{name: default}``).
    """

    def __init__(self, values=None, arguments=None, read_profile=None):
        self.arguments = dict(estimator_arguments() if arguments is None else arguments)
        self.given = {}
        self.profile_path = None
        self._read_profile = read_profile
        for name, value in split_pairs(values):
            if name in self.given:
                raise ValueError("setting %s given twice" % name)
            self.given[name] = self._check(name, value)
        self.approach = self.given.get("approach", REPLAY_SETTINGS["approach"])
        self.heater = self.given.get("heater", REPLAY_SETTINGS["heater"])
        self.use_ambient_column = self.given.get("use_ambient_column",
                                                 REPLAY_SETTINGS["use_ambient_column"])

    def _check(self, name, value):
        if name in REPLAY_SETTINGS:
            return parse_value(name, name, value)
        if name not in self.arguments:
            raise ValueError("unknown setting %s: the estimator takes %s; the replay takes %s"
                             % (name, ", ".join(n for n in self.arguments if n != "heater"),
                                ", ".join(REPLAY_SETTINGS)))
        kind = kind_of(name, self.arguments[name])
        value = parse_value(name, kind, value)
        if kind == "profile" and isinstance(value, str):
            if self._read_profile is None:
                raise ValueError("profile %s: a file name needs a profile reader (replay and "
                                 "benchmark have one, fleet not yet); in Python give a "
                                 "VesselProfile or its blob" % value)
            self.profile_path = value
            value = self._read_profile(value)
        return value

    def value(self, name):
        """The value a setting has in this replay: given, or else its default (the core's)."""
        if name in self.given:
            return self.given[name]
        if name in REPLAY_SETTINGS:
            return REPLAY_SETTINGS[name]
        if name in self.arguments:
            return self.arguments[name]
        raise KeyError(name)

    def estimator_values(self):
        """The estimator arguments given (``heater`` and the replay's own settings left out)."""
        return {k: v for k, v in self.given.items() if k not in REPLAY_SETTINGS}

    def constructor_kwargs(self, has_heater, any_duty):
        """The estimator's keyword arguments for a trace.

        ``has_heater``: the trace has a heater column; ``any_duty``: some duty
        in it is above 0. ``heater`` auto means on exactly then. Raises
        ValueError for heater on without a heater column.
        """
        if self.heater == "auto":
            use_heater = bool(has_heater and any_duty)
        else:
            use_heater = self.heater == "on"
        if use_heater and not has_heater:
            raise ValueError("heater on needs a heater column in the trace")
        kw = self.estimator_values()
        if "heater" in self.arguments:
            kw["heater"] = use_heater
        return kw

    def estimator(self, has_heater, any_duty, estimator_class=None):
        """A fresh estimator for a trace (see :meth:`constructor_kwargs`).

        ``estimator_class``: default the installed core's ThermalEstimator.
        The estimator's refusal of a value (out of range) is a ValueError
        naming it.
        """
        if estimator_class is None:
            from tinytherm.estimator import ThermalEstimator as estimator_class
        kw = self.constructor_kwargs(has_heater, any_duty)
        try:
            return estimator_class(**kw)
        except (TypeError, ValueError, OverflowError) as exc:
            raise ValueError("estimator settings: %s" % exc) from None

    def to_pairs(self):
        """The settings as ``"NAME=VALUE"`` texts that give the same settings back.

        For another process (a fleet's other core); a profile given as an
        object rather than a file has no text form (ValueError).
        """
        out = []
        for name, value in self.given.items():
            if name == "profile" and value is not None:
                if self.profile_path is None:
                    raise ValueError("setting profile has no text form (give a profile file)")
                text = self.profile_path
            elif name == "approach":
                text = {-1: "cool", 0: "either", 1: "heat"}[value]
            elif isinstance(value, bool):
                text = "true" if value else "false"
            elif value is None:
                text = "none"
            elif isinstance(value, float):
                text = repr(value)
            elif isinstance(value, (int, str)):
                text = str(value)
            else:
                raise ValueError("setting %s has no text form (give a profile file)" % name)
            out.append("%s=%s" % (name, text))
        return out

    def describe(self):
        """One line for reports: the settings given, or ``core defaults``."""
        if not self.given:
            return "core defaults"
        shown = dict(self.given)
        if "approach" in shown:
            shown["approach"] = {-1: "cool", 0: "either", 1: "heat"}[shown["approach"]]
        if self.profile_path is not None:
            shown["profile"] = self.profile_path
        return ", ".join("%s=%s" % kv for kv in shown.items())

    def __eq__(self, other):
        return isinstance(other, ReplaySettings) and self.given == other.given \
            and self.arguments == other.arguments

    def __repr__(self):
        return "ReplaySettings(%r)" % (self.given,)


def split_pairs(values):
    """``(name, value)`` pairs from a dict, ReplaySettings-style text pairs, or None."""
    if values is None:
        return []
    if isinstance(values, dict):
        return [(str(k).strip(), v) for k, v in values.items()]
    if isinstance(values, str):
        raise ValueError("settings must be a list of NAME=VALUE texts, got one text %r" % values)
    out = []
    for pair in values:
        if not isinstance(pair, str) or "=" not in pair:
            raise ValueError("setting %r is not NAME=VALUE" % (pair,))
        name, text = pair.split("=", 1)
        if not name.strip():
            raise ValueError("setting %r has no name" % (pair,))
        out.append((name.strip(), text))
    return out


def settings_of(settings=None, **values):
    """A :class:`ReplaySettings` from one, from ``values`` (name=value), or both merged.

    For functions that take ``settings=`` and keyword values, as
    :func:`host_sim.replay.replay.replay` does; a name in both is an error.
    """
    if settings is None:
        return ReplaySettings(values)
    if not isinstance(settings, ReplaySettings):
        settings = ReplaySettings(settings)
    if not values:
        return settings
    merged = dict(settings.given)
    for name, value in values.items():
        if name in merged:
            raise ValueError("setting %s given twice" % name)
        merged[name] = value
    out = ReplaySettings(merged, settings.arguments, settings._read_profile)
    if "profile" not in values:
        out.profile_path = settings.profile_path
    return out
