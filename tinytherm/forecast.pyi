from typing import Final, Optional, Sequence, Tuple

def const(x: int) -> int: ...

MAX_PIECES: Final[int]
MAX_ROOT_ITERATIONS: Final[int]
PERIODIC_SUBSTEPS: Final[int]
AMBIENT_CONSTANT: Final[int]
AMBIENT_RAMP: Final[int]
AMBIENT_PIECEWISE: Final[int]
AMBIENT_PERIODIC: Final[int]
PLAN_DUTY: Final[int]
PLAN_SCHEDULE: Final[int]
PLAN_BOOST_HOLD: Final[int]
PLAN_THERMOSTAT: Final[int]
REASON_NONE: Final[int]
REASON_NEVER: Final[int]
REASON_HORIZON: Final[int]
REASON_WORK_CAP: Final[int]
REASON_BAD_INPUT: Final[int]
REASON_HELD: Final[int]
REASON_TOO_SLOW: Final[int]
REASON_NO_DRIVE_NEEDED: Final[int]
REASON_LATE: Final[int]
REASON_BEYOND_EQUILIBRIUM: Final[int]
REASON_NAMES: Final[Tuple[str, ...]]

def reason_name(code: int) -> str: ...

class Forecast:
    status: int
    reason: int
    eta_s: Optional[float]
    searched_s: float
    work: int
    def __init__(self, rate_per_s: float = 0.0, gain_k_per_s: float = 0.0,
                 ambient_c: float = 20.0) -> None: ...
    def set_model(self, rate_per_s: float, gain_k_per_s: float = 0.0) -> None: ...
    def set_ambient_constant(self, ambient_c: float) -> None: ...
    def set_ambient_ramp(self, level_c: float, slope_c_per_s: float,
                         ramp_s: float = ...) -> None: ...
    def set_ambient_piecewise(self, times_s: Sequence[float], values_c: Sequence[float],
                              now_s: float = 0.0) -> None: ...
    def set_ambient_periodic(self, mean_c: float, amplitude_c: float, period_s: float,
                             phase_rad: float = 0.0) -> None: ...
    def set_plan_duty(self, duty: float) -> None: ...
    def set_plan_schedule(self, times_s: Sequence[float], duties: Sequence[float],
                          now_s: float = 0.0) -> None: ...
    def set_plan_boost_hold(self, hold_c: float) -> None: ...
    def set_plan_thermostat(self, on_below_c: float, off_above_c: float,
                            start_on: bool = True) -> None: ...
    def ambient_at_c(self, t_s: float) -> float: ...
    def hold_is_sustainable(self) -> bool: ...
    def temperature_at_c(self, t_s: float, start_c: float) -> float: ...
    def time_to_target_s(self, start_c: float, target_c: float,
                         horizon_s: float = ...) -> Optional[float]: ...

class AmbientTracker:
    memory_s: float
    band_c: float
    trend_s: float
    trend_min_share: float
    min_period_s: float
    max_period_s: float
    level_c: Optional[float]
    slope_c_per_s: Optional[float]
    mean_level_c: Optional[float]
    trend_share: float
    period_s: Optional[float]
    mean_c: Optional[float]
    amplitude_c: Optional[float]
    readings: int
    def __init__(self, memory_s: float = 1800.0, band_c: float = 0.3, trend_s: float = 600.0,
                 trend_min_share: float = 0.8, min_period_s: float = 120.0,
                 max_period_s: float = 14400.0) -> None: ...
    def reset(self) -> None: ...
    def update(self, ambient_c: float, dt_s: float) -> bool: ...
    def cycling(self) -> bool: ...
    def apply(self, fc: Forecast) -> int: ...
