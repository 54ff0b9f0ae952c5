from typing import Final, Optional, Sequence

def const(x: int) -> int: ...

PLAN_DUTY: Final[int]
PLAN_SCHEDULE: Final[int]
PLAN_BOOST_HOLD: Final[int]
PLAN_THERMOSTAT: Final[int]
MODE_OFF: Final[int]
MODE_ON: Final[int]
MODE_HOLDING: Final[int]

class HeaterPlan:
    kind: int
    duty: float
    times_s: Optional[Sequence[float]]
    duties: Optional[Sequence[float]]
    now_s: float
    cursor: int
    hold_c: float
    on_below_c: float
    off_above_c: float
    start_on: bool
    mode: int
    def __init__(self) -> None: ...
    def set_duty(self, duty: float) -> None: ...
    def set_schedule(self, times_s: Sequence[float], duties: Sequence[float],
                     now_s: float = 0.0) -> None: ...
    def set_boost_hold(self, hold_c: float) -> None: ...
    def set_thermostat(self, on_below_c: float, off_above_c: float,
                       start_on: bool = True) -> None: ...
    def start_mode(self, start_c: float) -> None: ...
    def switch_level_c(self) -> float: ...
    def switched(self) -> None: ...
    def duty_now(self) -> float: ...
