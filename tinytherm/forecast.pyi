from typing import Final, Optional, Sequence, Tuple

from tinytherm.ambient import (
    AMBIENT_CONSTANT as AMBIENT_CONSTANT,
    AMBIENT_PERIODIC as AMBIENT_PERIODIC,
    AMBIENT_PIECEWISE as AMBIENT_PIECEWISE,
    AMBIENT_RAMP as AMBIENT_RAMP,
    AmbientSchedule as AmbientSchedule,
    AmbientTracker as AmbientTracker,
)
from tinytherm.heater_plan import (
    MODE_HOLDING as MODE_HOLDING,
    PLAN_BOOST_HOLD as PLAN_BOOST_HOLD,
    PLAN_DUTY as PLAN_DUTY,
    PLAN_SCHEDULE as PLAN_SCHEDULE,
    PLAN_THERMOSTAT as PLAN_THERMOSTAT,
    HeaterPlan as HeaterPlan,
)
from tinytherm.piecewise import (
    MAX_PIECES as MAX_PIECES,
    MAX_ROOT_ITERATIONS as MAX_ROOT_ITERATIONS,
    PERIODIC_SUBSTEPS as PERIODIC_SUBSTEPS,
    REASON_BAD_INPUT as REASON_BAD_INPUT,
    REASON_BEYOND_EQUILIBRIUM as REASON_BEYOND_EQUILIBRIUM,
    REASON_HELD as REASON_HELD,
    REASON_HORIZON as REASON_HORIZON,
    REASON_LATE as REASON_LATE,
    REASON_NEVER as REASON_NEVER,
    REASON_NO_DRIVE_NEEDED as REASON_NO_DRIVE_NEEDED,
    REASON_NONE as REASON_NONE,
    REASON_TOO_SLOW as REASON_TOO_SLOW,
    REASON_WORK_CAP as REASON_WORK_CAP,
    PieceSolver as PieceSolver,
)

REASON_NAMES: Final[Tuple[str, ...]]

def reason_name(code: int) -> str: ...

class Forecast:
    status: int
    reason: int
    eta_s: Optional[float]
    searched_s: float
    work: int
    ambient: AmbientSchedule
    heater: HeaterPlan
    solver: PieceSolver
    def __init__(self, rate_per_s: float = 0.0, gain_k_per_s: float = 0.0,
                 ambient_c: float = 20.0) -> None: ...
    @property
    def rate_per_s(self) -> float: ...
    @property
    def gain_k_per_s(self) -> float: ...
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
