from typing import Optional

DISCONNECTED_CODE_C: float
POWER_UP_CODE_C: float
GAP_NONE: int
GAP_WIDEN: int
GAP_RESTART: int

class ReadingGuard:
    accepted: int
    rejected: int
    consecutive_rejections: int
    last_verdict: int
    gap: int
    elapsed_s: float
    min_c: float
    max_c: float
    quantum_c: float
    spike_window: int
    spike_k: float
    spike_floor_c: float
    error_codes: bool
    error_margin_c: float
    max_gap_s: float
    restart_gap_s: float
    stuck_change_c: Optional[float]
    stuck_min_s: float
    count_not_finite: int
    count_out_of_range: int
    count_error_code: int
    count_time_backwards: int
    count_duplicate_time: int
    count_spike: int
    count_stuck: int
    count_bad_input: int
    count_long_gaps: int
    count_restart_gaps: int
    def __init__(self, min_c: float = -40.0, max_c: float = 150.0, quantum_c: float = 0.0625,
                 spike_window: int = 3, spike_k: float = 4.0,
                 spike_floor_c: Optional[float] = None, error_codes: bool = True,
                 error_margin_c: float = 2.0, max_gap_s: float = 300.0,
                 restart_gap_s: float = 3600.0, stuck_change_c: Optional[float] = 1.0,
                 stuck_min_s: float = 30.0) -> None: ...
    def reset(self, counts: bool = True) -> None: ...
    def clear_counts(self) -> None: ...
    def count(self, verdict: int) -> int: ...
    def check(self, temp_c: float, dt_s: float, expected_rate_c_per_s: float = 0.0,
              inputs_ok: bool = True) -> int: ...
    def check_ticks(self, temp_c: float, ticks_ms: int, expected_rate_c_per_s: float = 0.0,
                    inputs_ok: bool = True) -> int: ...
