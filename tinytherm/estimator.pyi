from typing import Optional, Union

from tinytherm.answer import Audits
from tinytherm.change import ChangeDetector
from tinytherm.fit import BlockSums, Inputs, Noise, Regression
from tinytherm.guard import ReadingGuard
from tinytherm.profile import VesselProfile
from tinytherm.settle import NO_REF as NO_REF, TRAVEL as TRAVEL, TRAVEL_ON as TRAVEL_ON, Settle
from tinytherm.status import Answer

SCALE: int
MAX_BLOCK_READINGS: int
GAP_RESTART: int
BLOCK_S: float
MEMORY_FRACTION: float
MIN_MEMORY_S: float
MAX_MEMORY_S: float
SPAN_BLOCKS: float
RATE_PRIOR_PER_S: float
RATE_PRIOR_MEAN_PER_S: float
KNOWN_AMBIENT_SD_C: float
AIR_VIEW_SD: float
TURN_C: float
DETECT_MIN_BLOCKS: int
ANCHOR_GAIN: float
MISMATCH_C: float
MAX_GAP_S: float
PROFILE_HEATER_MISMATCH: int
PROFILE_REJECTED: int


class ThermalEstimator(Answer):
    heater: bool
    profile_reason: int
    guard: ReadingGuard
    detector: ChangeDetector
    inputs: Inputs
    noise: Noise
    blocks: BlockSums
    reg: Regression
    audits: Audits
    settle: Settle
    readings: int
    rejected: int
    last_verdict: int
    changes: int
    turns: int
    def __init__(self, ambient_c: Optional[float] = None, ambient_prior_c: float = 21.0,
                 ambient_prior_sd_c: float = 8.0, heater: bool = False, interval: float = 0.8, quantum_c: float = 0.0625,
                 min_temp_c: float = -55.0, max_temp_c: float = 150.0, spike_window: int = 3,
                 restart_gap_s: float = 3600.0, probe_codes: bool = False,
                 profile: Union[VesselProfile, bytes, bytearray, memoryview, None] = None
                 ) -> None: ...
    def reset(self) -> None: ...
    def update(self, temp_c: float, dt_s: float, ambient_c: Optional[float] = None,
               duty: float = 0.0) -> int: ...
    def update_ticks(self, temp_c: float, ticks_ms: int, ambient_c: Optional[float] = None,
                     duty: float = 0.0, slept_s: Optional[float] = None) -> int: ...
    def predict(self, target_c: float, approach: int = 0) -> int: ...
    def forecast_s(self, moved_c: float, level_c: float, slope_c_per_s: float,
                   rate_per_s: float) -> Optional[float]: ...
    def save(self) -> bytearray: ...
    def restore(self, blob: Union[bytes, bytearray, memoryview]) -> int: ...
