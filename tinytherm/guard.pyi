from typing import Any, Optional, Union

def const(x: Any) -> Any: ...

DISCONNECTED_CODE_C: float
POWER_UP_CODE_C: float
GAP_NONE: int
GAP_WIDEN: int
GAP_RESTART: int

class ReadingGuard:
    STATE_SIZE: int
    accepted: int
    rejected: int
    consecutive_rejections: int
    last_verdict: int
    gap: int
    elapsed_ms: int
    elapsed_s: float
    min_c: float
    max_c: float
    quantum_c: float
    spike_window: int
    spike_k: float
    spike_floor_c: float
    probe_codes: bool
    max_gap_ms: int
    restart_gap_ms: int
    stuck_change_c: Optional[float]
    stuck_min_ms: int
    def __init__(self, min_c: float = -40.0, max_c: float = 150.0, quantum_c: float = 0.0625,
                 spike_window: int = 3, spike_k: float = 4.0,
                 spike_floor_c: Optional[float] = None, probe_codes: bool = False,
                 error_margin_c: float = 2.0, max_gap_s: float = 300.0,
                 restart_gap_s: float = 3600.0, stuck_change_c: Optional[float] = 1.0,
                 stuck_min_s: float = 30.0) -> None: ...
    def reset(self, counts: bool = True) -> None: ...
    def clear_counts(self) -> None: ...
    def count(self, verdict: int) -> int: ...
    def gap_count(self, gap: int) -> int: ...
    def settings_key(self) -> int: ...
    def pack_into(self, buf: Union[bytearray, memoryview], offset: int) -> None: ...
    def unpack_from(self, buf: Union[bytes, bytearray, memoryview], offset: int) -> bool: ...
    def held_c(self) -> Optional[float]: ...
    def check(self, temp_c: Any, dt_s: Any, expected_rate_c_per_s: float = 0.0,
              inputs_ok: bool = True) -> int: ...
    def check_ticks(self, temp_c: Any, ticks_ms: int, expected_rate_c_per_s: float = 0.0,
                    inputs_ok: bool = True, slept_s: Optional[float] = None) -> int: ...
