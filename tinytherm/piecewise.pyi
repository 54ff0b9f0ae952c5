from typing import Final, Sequence

from tinytherm.ambient import AmbientSchedule

def const(x: int) -> int: ...

MAX_PIECES: Final[int]
MAX_ROOT_ITERATIONS: Final[int]
PERIODIC_SUBSTEPS: Final[int]
REASON_NONE: Final[int]
REASON_NEVER: Final[int]
REASON_HORIZON: Final[int]
REASON_WORK_CAP: Final[int]
REASON_BAD_INPUT: Final[int]
REASON_HELD: Final[int]
REASON_TOO_SLOW: Final[int]
REASON_NO_DRIVE_NEEDED: Final[int]
REASON_LATE: Final[int]
REASON_BEYOND_EQUILIBRIUM: Final[int]
PIECE_LINEAR: Final[int]
PIECE_SINE: Final[int]

class PieceSolver:
    k: float
    g: float
    kind: int
    t0_s: float
    T0_c: float
    q: float
    r_c: float
    b: float
    w: float
    a_rad: float
    amp_c: float
    period_s: float
    resp_c: float
    psi: float
    work: int
    stop: int
    reached_s: float
    def __init__(self) -> None: ...
    def tick(self) -> bool: ...
    def advance(self, tt: Sequence[float], i: int, now: float, t: float) -> int: ...
    def setup(self, t: float, temp_c: float, duty: float, amb: AmbientSchedule) -> None: ...
    def temp(self, s: float) -> float: ...
    def slope(self, s: float, temp_c: float) -> float: ...
    def first_root(self, level: float, length: float) -> float: ...
