from typing import Optional, Union

class ChangeDetector:
    STATE_SIZE: int
    drift: float
    threshold: float
    z_clip: float
    scale_n: int
    jump_z: Optional[float]
    disturbed: bool
    up: float
    down: float
    mean_abs_z: float
    last_direction: int
    readings: int
    alarms: int
    def __init__(self, drift: float = 0.75, threshold: float = 12.0, z_clip: float = 7.0,
                 scale_n: int = 200, jump_z: Optional[float] = None) -> None: ...
    def reset(self) -> None: ...
    def update(self, innovation_c: float, sigma_c: float) -> int: ...
    def pack_into(self, buf: Union[bytearray, memoryview], offset: int) -> None: ...
    def unpack_from(self, buf: Union[bytes, bytearray, memoryview], offset: int) -> bool: ...
