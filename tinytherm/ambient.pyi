from typing import TYPE_CHECKING, Final, Optional, Sequence

if TYPE_CHECKING:
    from tinytherm.forecast import Forecast

def const(x: int) -> int: ...

AMBIENT_CONSTANT: Final[int]
AMBIENT_RAMP: Final[int]
AMBIENT_PIECEWISE: Final[int]
AMBIENT_PERIODIC: Final[int]

class AmbientSchedule:
    kind: int
    level_c: float
    slope_c_per_s: float
    ramp_s: float
    amplitude_c: float
    period_s: float
    phase_rad: float
    times_s: Optional[Sequence[float]]
    values_c: Optional[Sequence[float]]
    now_s: float
    cursor: int
    lo_c: float
    hi_c: float
    pw_lo_c: float
    pw_hi_c: float
    def __init__(self, ambient_c: float = 20.0) -> None: ...
    def set_constant(self, ambient_c: float) -> None: ...
    def set_ramp(self, level_c: float, slope_c_per_s: float, ramp_s: float = ...) -> None: ...
    def set_piecewise(self, times_s: Sequence[float], values_c: Sequence[float],
                      now_s: float = 0.0) -> None: ...
    def set_periodic(self, mean_c: float, amplitude_c: float, period_s: float,
                     phase_rad: float = 0.0) -> None: ...
    def at_c(self, t_s: float) -> float: ...
    def range_c(self) -> None: ...
    def angle_at(self, t_s: float) -> float: ...
    def piecewise_c(self, t_s: float) -> float: ...

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
