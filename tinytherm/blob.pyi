from typing import Optional, Tuple, Union

MAGIC: bytes
BLOB_SIZE: int
LAYOUT_VERSION: int
PAYLOAD_OFFSET: int
PAYLOAD_SIZE: int
CRC_OFFSET: int
RESTORED: int
BLOB_LENGTH: int
BLOB_MAGIC: int
BLOB_VERSION: int
BLOB_CRC: int
BLOB_SETTINGS: int
BLOB_VALUES: int
RESTORE_NAMES: Tuple[str, ...]

def new_frame(settings: int, buf: Optional[bytearray] = None) -> bytearray: ...
def seal(buf: bytearray) -> bytearray: ...
def check(blob: Union[bytes, bytearray, memoryview], settings: int) -> int: ...
def restore_name(code: int) -> str: ...
