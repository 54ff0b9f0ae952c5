from typing import Optional

from tinytherm.fit import Regression

INF: float

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
    def forget(self) -> None: ...
    def clear(self, code: int) -> None: ...
    def arrive(self) -> None: ...
    def count_down(self, age_ms: int, force: bool = False) -> bool: ...

def eta_rel_var(gap: float, slope: float, k: float, eta: float, reg: Regression,
                gk: float) -> float: ...
def spread(z_sd: float) -> float: ...
