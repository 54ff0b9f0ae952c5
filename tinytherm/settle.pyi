from typing import Any

SETTLE_S: float
SETTLE_BEND: float
RISE_ARRIVE_MIN_S: float
RISE_BEND: float
RISE_DROP_SD: float
PAIR_SD: float
SETTLE_MS: int
RISE_ARRIVE_MIN_MS: int
SCALE: int
LIMIT_COUNTS: int
NO_REF: int
TRAVEL: int
TRAVEL_ON: int

class Settle:
    STATE_SIZE: int
    ref: int
    settled: bool
    def __init__(self) -> None: ...
    def first(self, c: int) -> None: ...
    turn: bool
    def jumped(self) -> None: ...
    def carried(self, est: Any, target_c: float, level_c: float, slope: float, k: float) -> None: ...
    def seeded(self, turn: bool, ref: int = ...) -> None: ...
    def reseed(self, cb: int) -> None: ...
    def block_closed(self, age_ms: int, cb: int, k: float, reg: Any, slope: float,
                     noise_sd_c: float, n: int) -> int: ...
    def allows(self, est: Any, target_c: float, m: int, age_ms: int) -> bool: ...
    def backed_off(self, est: Any, m: int) -> bool: ...
