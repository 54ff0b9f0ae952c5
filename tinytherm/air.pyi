from typing import Union

AIR_SMOOTH_S: float
CYCLE_SLOW_S: float
CYCLE_BAND_C: float
CYCLE_MIN_S: float
CYCLE_MAX_S: float
SCALE: int

Buffer = Union[bytes, bytearray, memoryview]

class Air:
    STATE_SIZE: int
    fine: int
    slow: int
    last: int
    side: int
    running: bool
    cyc_int: int
    cyc_ms: int
    has_mean: bool
    mean: int
    alpha_ms: int
    alpha: int
    beta: int
    def __init__(self) -> None: ...
    def start(self, a: int) -> int: ...
    def step(self, a: int, dt_ms: int, restart: bool) -> int: ...
    def ahead_fine(self) -> int: ...
    def pack_into(self, buf: bytearray, offset: int) -> None: ...
    def unpack_from(self, buf: Buffer, offset: int) -> bool: ...
