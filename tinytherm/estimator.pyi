from typing import Optional

def normal_quantile(p: float) -> float: ...

class ThermalEstimator:
    heater: bool
    memory_s: float
    block_s: float
    interval: float
    settle_s: float
    max_relative_sd: float
    min_temp_c: float
    max_temp_c: float
    readings: int
    rejected: int
    last_verdict: int
    status: int
    eta_s: Optional[float]
    eta_low_s: Optional[float]
    eta_high_s: Optional[float]
    rate_per_s: Optional[float]
    equilibrium_c: Optional[float]
    ambient_est_c: Optional[float]
    gain_k_per_s: float
    temp_est_c: Optional[float]
    def __init__(self, ambient_c: Optional[float] = None, ambient_prior_c: float = 21.0,
                 ambient_prior_sd_c: float = 8.0, heater: bool = False, memory_s: float = 600.0,
                 block_s: float = 10.0, interval: float = 0.8, settle_s: float = 60.0,
                 max_relative_sd: float = 0.25, rate_prior_per_s: float = ...,
                 excitation_c: float = 0.5, min_temp_c: float = -55.0,
                 max_temp_c: float = 150.0) -> None: ...
    def reset(self) -> None: ...
    def update_ticks(self, temp_c: float, ticks_ms: int, ambient_c: Optional[float] = None,
                     duty: float = 0.0) -> int: ...
    def update(self, temp_c: float, dt_s: float, ambient_c: Optional[float] = None,
               duty: float = 0.0) -> int: ...
    def predict(self, target_c: float) -> int: ...
