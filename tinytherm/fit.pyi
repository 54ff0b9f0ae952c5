from typing import Any, Optional, Tuple

from tinytherm.air import Air

SCALE: int
DUTY_SCALE: int
MAX_BLOCK_READINGS: int
NOISE_MAX_DT_MS: int
NOISE_PRIOR_C: float
NOISE_PRIOR_N: int
AIR_COLUMN: int

class BlockSums:
    STATE_SIZE: int
    dir: int
    ext_sy: int
    ext_n: int
    level: float
    pending: int
    air_col: bool
    n: int
    it: int
    ix: int
    iv: int
    st: int
    sx: int
    sv: int
    sy: int
    c: int
    rc: int
    uc: int
    g0: int
    u0: int
    cb: int
    age_ms: int
    readings: int
    e2: int
    en: int
    def __init__(self) -> None: ...
    def reset(self) -> None: ...
    def first(self, c: int, rc: int, uc: int) -> None: ...
    def add(self, c: int, rc: int, uc: int, dt_ms: int, expect: int, clip: int) -> None: ...
    def noise_var(self) -> float: ...
    def next_block(self) -> None: ...

class Noise:
    STATE_SIZE: int
    floor: float
    var: float
    n: int
    sd: float
    clip: int
    expect: int
    expect_ms: int
    def __init__(self, quantum_c: float) -> None: ...
    def reset(self) -> None: ...
    def refresh(self) -> None: ...
    def expectation(self, rate_c_per_s: float, dt_ms: int) -> int: ...
    def learn(self, blocks: BlockSums) -> None: ...

class Inputs:
    STATE_SIZE: int
    fixed: Optional[int]
    measured: bool
    air: Optional[Air]
    duty: float
    duty_c: int
    prior: Tuple[float, float]
    ahead: Optional[int]
    def __init__(self, fixed_c: Optional[float], prior_c: float = 21.0,
                 prior_sd_c: float = 8.0) -> None: ...
    def reset(self) -> None: ...
    def known(self) -> bool: ...
    def reference(self, ambient_c: Optional[float], dt_ms: int, restart: bool) -> int: ...
    def ahead_fine(self) -> int: ...
    def ahead_shift_c(self, ref_counts: int) -> float: ...
    def duty_counts(self, duty: float) -> int: ...

class Regression:
    STATE_SIZE: int
    heater: int  # False, True (the duty's column) or AIR_COLUMN
    ok: bool
    w: float
    w2: float
    nb: float
    my: float
    ctt: float
    ctx: float
    cty: float
    cxx: float
    cxy: float
    cyy: float
    ctu: float  # (ctu, cxu, cuu, cuy, psg, pkg, pgg: with a third column only)
    cxu: float
    cuu: float
    cuy: float
    t: float
    x: float
    v: float
    rt: float
    rx: float
    rv: float
    yb: float
    anchor: float
    s: float
    k: float
    g: float
    pss: float
    psk: float
    pkk: float
    psg: float
    pkg: float
    pgg: float
    var_my: float
    s2r: float
    def __init__(self, heater: int) -> None: ...
    def reset(self) -> None: ...
    def clear(self) -> None: ...
    def add_block(self, n: int, tb: float, xb: float, vb: float, yb: float, lam: float,
                  t_end: float, x_end: float, v_end: float, dg: float, du: float) -> None: ...
    def rate_free(self) -> Optional[float]: ...
    def slope_loose(self, lk: float, kp: float) -> Optional[float]: ...
    def solve(self, s2: float, lk: float, kp: float, lh: float, dist: float, lg: float,
              gp: float) -> bool: ...
    def level(self) -> float: ...
    def var_level(self, dt: float = 0.0, dx: float = 0.0, dv: float = 0.0) -> float: ...
    def eta_rel_var(self, gap: float, slope: float, k: float, eta: float, gk: float) -> float: ...

def use_air_column(est: Any, on: bool) -> None: ...
def to_counts(temp_c: float) -> int: ...
