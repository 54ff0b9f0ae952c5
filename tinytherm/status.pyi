from typing import Any, Final, Optional, Tuple

def const(x: int) -> int: ...

GATHERING: Final[int]
SETTLING: Final[int]
TRACKING: Final[int]
ARRIVED: Final[int]
OUT_OF_REACH: Final[int]
SENSOR_FAULT: Final[int]
DISTURBED: Final[int]
STATUS_NAMES: Final[Tuple[str, ...]]

ACCEPTED: Final[int]
NOT_FINITE: Final[int]
OUT_OF_RANGE: Final[int]
ERROR_CODE: Final[int]
TIME_BACKWARDS: Final[int]
DUPLICATE_TIME: Final[int]
SPIKE: Final[int]
STUCK: Final[int]
BAD_INPUT: Final[int]
VERDICT_NAMES: Final[Tuple[str, ...]]

def status_name(code: int) -> str: ...
def verdict_name(code: int) -> str: ...

class Answer:
    status: int
    eta_s: Optional[float]
    eta_low_s: Optional[float]
    eta_high_s: Optional[float]
    eta_rel_sd: Optional[float]
    rate_per_s: Optional[float]
    equilibrium_c: Optional[float]
    ambient_est_c: Optional[float]
    temp_est_c: Optional[float]
    gain_k_per_s: float
    def clear(self, code: int) -> None: ...
    def arrive(self) -> None: ...
    def count_down(self, c: Any, age_ms: int, force: bool = False) -> bool: ...
