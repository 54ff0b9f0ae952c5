from typing import Any, Optional

ARRIVE_TOL_C: float
ARRIVE_MIN_S: float
ARRIVE_Z: float
HOLD_OPEN_N: int
EQUILIBRIUM_SLACK: float
WIGGLE_AGE: float
MAX_REL_SD: float
FAULT_AFTER: int
PROFILE_LAG_TIMES: float
SCALE: int
NOISE_PRIOR_N: int

def move_c(noise_sd_c: float) -> float: ...

AUDIT_HORIZONS: tuple[float, float, float]
AUDIT_PRIOR_VAR: float
LINE_PRIOR_VAR: float
YOUNG_PRIOR_VAR: float
AUDIT_MEMORY: int
AUDIT_FORGET: float
AUDIT_STRETCH: float
AUDIT_LOG_CAP: float
DELTA_VAR_FACTOR: float
RATE_MODEL_SD: float
REACH_SD: float
AUDIT_YOUNG: float
DRIFT_SD: float
DRIFT_MIN_S: float
DRIFT_BEND: float
UNSEEN_BEND: float
UNSEEN_FROM: float

class Audit:
    fraction: float
    var: float
    n: int
    age: float
    level: float
    slope: float
    rate: float
    drift: float
    def __init__(self, fraction: float) -> None: ...
    def clear(self) -> None: ...
    def horizon_s(self, age_s: float) -> float: ...
    def drift_to(self, dt: float, level: float, slope: float,
                 rate: float) -> Optional[float]: ...
    def due(self, age_s: float) -> bool: ...
    def check(self, law: Any, age_s: float, level: float, slope: float, rate: float,
              need_c: float) -> None: ...

class Audits:
    STATE_SIZE: int
    a: tuple[Audit, Audit, Audit]
    z: float
    done: int
    gen: int
    target: Optional[float]
    approach: int
    age_ms: int
    arrive_dir: int
    arrive_c: int
    hold_c: int
    def __init__(self, z: float) -> None: ...
    def forget(self) -> None: ...
    def reset(self) -> None: ...
    def clear(self) -> None: ...
    def any_due(self, age_s: float) -> bool: ...
    def stands_out(self, moved: float, reg: Any, slope: float, k: float, var_slope: float,
                   gk: float) -> bool: ...
    def var_at(self, eta_s: float, age_s: float, prior_var: float) -> float: ...

def predict(self: Any, target_c: float, approach: int = 0) -> int: ...
