"""The texts of a refused argument and of the parts' reprs (tinytherm.texts, loaded only
when needed): each refusal names its argument, each text is used, the reprs read back.

Runs on CPython and MicroPython alike.
"""
from tinytherm import texts
from tinytherm.change import ChangeDetector
from tinytherm.estimator import ThermalEstimator
from tinytherm.guard import ReadingGuard
from tinytherm.num import normal_quantile, refused


def _message(make, **kwargs):
    try:
        make(**kwargs)
    except ValueError as exc:
        return str(exc)
    return None


# (a refused argument of each text: the maker, its arguments, the text's name)
_CASES = (
    (ThermalEstimator, {"min_temp_c": 5.0, "max_temp_c": 1.0}, "min_temp_c"),
    (ThermalEstimator, {"ambient_c": 500.0}, "ambient_c"),
    (ThermalEstimator, {"ambient_prior_c": float("nan")}, "ambient_prior_c"),
    (ThermalEstimator, {"ambient_prior_sd_c": 0.0}, "ambient_prior_sd_c"),
    (ThermalEstimator, {"heater": 1}, "heater"),
    (ThermalEstimator, {"interval": 1.0}, "interval"),
    (ThermalEstimator, {"probe_codes": None}, "probe_codes"),
    (ThermalEstimator, {"quantum_c": 0.0}, "quantum_c"),
    (ThermalEstimator, {"restart_gap_s": 0.5}, "restart_gap_s"),
    (ReadingGuard, {"spike_k": 0.0}, "setting"),
    (ReadingGuard, {"min_c": 5.0, "max_c": 1.0}, "min_c"),
    (ReadingGuard, {"spike_window": 4}, "spike_window"),
    (ChangeDetector, {"drift": 0.0}, "drift"),
    (ChangeDetector, {"threshold": -1.0}, "threshold"),
    (ChangeDetector, {"drift": 1.0, "z_clip": 0.5}, "z_clip"),
    (ChangeDetector, {"scale_n": 2.5}, "scale_n"),
    (ChangeDetector, {"z_clip": 7.0, "jump_z": 3.0}, "jump_z"),
    (normal_quantile, {"p": 1.5}, "p"),
)


def test_each_refusal_names_its_argument():
    for make, kwargs, name in _CASES:
        msg = _message(make, **kwargs)
        assert msg is not None, name
        # the argument the caller passed is named ("setting": the guard's spike_k)
        named = "spike_k" if name == "setting" else name
        assert msg.startswith(named) or msg.startswith("need " + named), (name, msg)


def test_every_text_is_some_refusal():
    used = set(name for _, _, name in _CASES)
    for name in dir(texts):
        if not name.startswith("_") and type(getattr(texts, name)) is str:
            assert name in used, name


def test_refused_formats_its_arguments():
    exc = refused("setting", ("spike_k", 0.001, 1000.0, "standard deviations", 0.0))
    assert type(exc) is ValueError
    assert str(exc) == ("spike_k must be a number in [0.001, 1000.0] standard deviations, "
                        "got 0.0")
    assert str(refused("heater")) == "heater must be True or False"


def test_reprs_name_their_settings():
    est = ThermalEstimator()
    assert repr(est) == ("ThermalEstimator(readings=0, status=gathering, k=None, "
                         "equilibrium_c=None, eta_s=None)")
    assert repr(est.guard).startswith("ReadingGuard(min_c=-55.0, max_c=150.0, quantum_c=0.0625,")
    assert repr(est.detector) == ("ChangeDetector(drift=0.75, threshold=12.0, z_clip=7.0, "
                                  "scale_n=200, jump_z=12.0, alarms=0)")
