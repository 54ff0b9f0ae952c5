from typing import Any, List, Optional, Tuple, Union

PROFILE_FORMAT: int
PROFILE_SIZE: int
PROFILE_Z80: float
FLAG_HEATER: int
FLAG_OWN_FIT: int
DIFF_REF_C: float
PROFILE_MISMATCH_Z: float
PROFILE_JUDGE_LAGS: float
PROFILE_YOUNG_S: float
BIN_EDGES_S: Tuple[float, float, float]
QUANTILE_LOW: float
QUANTILE_HIGH: float
REASON_OK: int
REASON_LENGTH: int
REASON_VERSION: int
REASON_CRC: int
REASON_FLAGS: int
REASON_RANGE: int
REASON_NAMES: Tuple[str, ...]

def reason_name(code: int) -> str: ...

class VesselProfile:
    heater: bool
    rate_per_s: float
    rate_log_sd: float
    eq_offset_c: float
    eq_offset_sd_c: float
    gain_k_per_s: float
    gain_rel_sd: float
    probe_lag_s: float
    rate_exponent: float
    log_q_low: Tuple[float, float, float, float]
    log_q_high: Tuple[float, float, float, float]
    own_fit: bool
    def __init__(self, heater: Union[bool, int] = False, rate_per_s: float = ...,
                 rate_log_sd: float = 0.5, eq_offset_c: float = 0.0, eq_offset_sd_c: float = 3.0,
                 gain_k_per_s: float = 0.0, gain_rel_sd: float = 0.0,
                 probe_lag_s: float = 0.0, rate_exponent: float = 1.0,
                 log_q_low: Optional[Union[Tuple[float, ...], List[float]]] = None,
                 log_q_high: Optional[Union[Tuple[float, ...], List[float]]] = None,
                 own_fit: Union[bool, int] = False) -> None: ...
    def problem(self) -> Optional[str]: ...
    def rate_at(self, diff_c: float) -> float: ...
    def local_first_order(self, temp_c: float, ambient_c: float) -> Tuple[float, float]: ...
    def time_to_target_s(self, temp_c: float, target_c: float,
                         equilibrium_c: float) -> Optional[float]: ...
    def priors(self, dist_c: float, s2: float, duty: float = ...
               ) -> tuple[float, float, float, float, float, float]: ...
    def law_s(self, gap_c: float, level_c: float, slope_c_per_s: float,
              ambient_c: float, slope_rel_var: float = ...) -> Optional[float]: ...
    def law_for(self, est: Any, gap_c: float, level_c: float, slope_c_per_s: float,
                slope_rel_var: float = ...) -> Optional[float]: ...
    def rate_z(self, level_c: float, slope_c_per_s: float, ambient_c: float,
               slope_rel_var: float, duty: float = ...) -> Optional[float]: ...
    def reference_c(self, est: Any) -> float: ...
    def toward_e(self, est: Any, direction: int) -> bool: ...
    def rate_fails(self, est: Any, slope_c_per_s: float) -> bool: ...
    def interval_log_bounds(self, eta_s: float) -> Tuple[float, float]: ...
    def interval_into(self, est: Any, eta_s: float, wide: float = ...) -> None: ...
    def first_answer(self, est: Any, target_c: float, approach: int) -> None: ...
    def to_blob(self) -> bytes: ...
    @staticmethod
    def given(profile: Union["VesselProfile", bytes, bytearray, memoryview], heater: bool,
              mismatch_reason: int) -> Tuple[Optional["VesselProfile"], int]: ...
    @staticmethod
    def from_blob(blob: Union[bytes, bytearray, memoryview]
                  ) -> Tuple[Optional["VesselProfile"], int]: ...
