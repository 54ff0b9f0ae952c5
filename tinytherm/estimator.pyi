from typing import Optional, Union

from tinytherm.change import ChangeDetector
from tinytherm.guard import ReadingGuard
from tinytherm.profile import VesselProfile

ARRIVE_MIN_S: float
ARRIVE_TOL_C: float
AMBIENT_SMOOTH_S: float
ANCHOR_GAIN: float
AUDIT_FRACTIONS: tuple[float, float, float]
AUDIT_LOG_CAP: float
AUDIT_MEMORY: int
AUDIT_MIN_S: tuple[float, float, float]
AUDIT_PRIOR_VAR: float
AUDIT_STRETCH: float
DETECT_MIN_BLOCKS: int
GAP_RESTART: int
KNOWN_AMBIENT_SD_C: float
MAX_BLOCK_READINGS: int
MIN_MEMORY_S: float
SPAN_BLOCKS: float
MISMATCH_C: float
NOISE_PRIOR_C: float
NOISE_PRIOR_N: int
PROFILE_HEATER_MISMATCH: int
PROFILE_MISMATCH_N: int
PROFILE_MISMATCH_VAR: float
PROFILE_REJECTED: int
PROFILE_Z80: float

def normal_quantile(p: float) -> float: ...
def time_to_target_from_slope_s(gap_c: float, slope_c_per_s: float,
                                rate_per_s: float) -> Optional[float]: ...

class ThermalEstimator:
    heater: bool
    memory_s: float
    memory_fraction: float
    block_s: float
    interval: float
    settle_s: float
    max_relative_sd: float
    min_temp_c: float
    max_temp_c: float
    fault_after: int
    turn_c: float
    profile_reason: int
    guard: ReadingGuard
    detector: Optional[ChangeDetector]
    readings: int
    rejected: int
    changes: int
    turns: int
    last_verdict: int
    status: int
    eta_s: Optional[float]
    eta_low_s: Optional[float]
    eta_high_s: Optional[float]
    eta_rel_sd: Optional[float]
    rate_per_s: Optional[float]
    equilibrium_c: Optional[float]
    ambient_est_c: Optional[float]
    gain_k_per_s: float
    temp_est_c: Optional[float]
    def __init__(self, ambient_c: Optional[float] = None, ambient_prior_c: float = 21.0,
                 ambient_prior_sd_c: float = 8.0, ambient_sd_c: float = 2.0,
                 heater: bool = False, memory_s: float = 7200.0,
                 memory_fraction: float = 0.35, block_s: float = 20.0, interval: float = 0.8,
                 settle_s: float = 0.0, max_relative_sd: float = 5.0,
                 rate_prior_per_s: float = ..., min_temp_c: float = -55.0,
                 max_temp_c: float = 150.0, quantum_c: float = 0.0625, spike_window: int = 3,
                 max_gap_s: float = 900.0, restart_gap_s: float = 3600.0,
                 stuck_change_c: Optional[float] = 1.0, stuck_min_s: float = 30.0,
                 fault_after: int = 5, detect_changes: bool = True,
                 turn_c: float = 1.0,
                 profile: Union[VesselProfile, bytes, bytearray, memoryview, None] = None
                 ) -> None: ...
    def reset(self) -> None: ...
    def update_ticks(self, temp_c: float, ticks_ms: int, ambient_c: Optional[float] = None,
                     duty: float = 0.0) -> int: ...
    def update(self, temp_c: float, dt_s: float, ambient_c: Optional[float] = None,
               duty: float = 0.0) -> int: ...
    def predict(self, target_c: float, approach: int = 0) -> int: ...
    def save(self) -> bytearray: ...
    def restore(self, blob: Union[bytes, bytearray, memoryview]) -> int: ...
