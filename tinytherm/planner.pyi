from typing import Optional

from tinytherm.forecast import (
    Forecast as Forecast,
    REASON_BAD_INPUT as REASON_BAD_INPUT,
    REASON_BEYOND_EQUILIBRIUM as REASON_BEYOND_EQUILIBRIUM,
    REASON_LATE as REASON_LATE,
    REASON_NEVER as REASON_NEVER,
    REASON_NONE as REASON_NONE,
    REASON_NO_DRIVE_NEEDED as REASON_NO_DRIVE_NEEDED,
    REASON_TOO_SLOW as REASON_TOO_SLOW,
    REASON_WORK_CAP as REASON_WORK_CAP,
)

class ReadyByPlanner:
    forecast: Forecast
    status: int
    reason: int
    start_in_s: Optional[float]
    heat_for_s: Optional[float]
    duty: Optional[float]
    eta_s: Optional[float]
    earliest_s: Optional[float]
    off_at_deadline_c: Optional[float]
    on_time: bool
    work: int
    def __init__(self, rate_per_s: float = 0.0, ambient_c: float = 20.0,
                 gain_k_per_s: float = 0.0) -> None: ...
    def set_model(self, rate_per_s: float, ambient_c: float, gain_k_per_s: float) -> None: ...
    def latest_start(self, start_c: float, target_c: float, deadline_s: float) -> int: ...
    def constant_duty(self, start_c: float, target_c: float, deadline_s: float) -> int: ...
    def cooling(self, start_c: float, target_c: float, deadline_s: float) -> int: ...
