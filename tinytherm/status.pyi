from typing import Final, Tuple

def const(x: int) -> int: ...

GATHERING: Final[int]
SETTLING: Final[int]
TRACKING: Final[int]
ARRIVED: Final[int]
OUT_OF_REACH: Final[int]
SENSOR_FAULT: Final[int]
DISTURBED: Final[int]
STATUS_NAMES: Final[Tuple[str, ...]]

ACCEPTED: Final[int]
NOT_FINITE: Final[int]
OUT_OF_RANGE: Final[int]
ERROR_CODE: Final[int]
TIME_BACKWARDS: Final[int]
DUPLICATE_TIME: Final[int]
SPIKE: Final[int]
STUCK: Final[int]
BAD_INPUT: Final[int]
VERDICT_NAMES: Final[Tuple[str, ...]]

def status_name(code: int) -> str: ...
def verdict_name(code: int) -> str: ...
