from typing import Optional, Union

def crc32(data: Union[bytes, bytearray, memoryview], value: int = 0, start: int = 0,
          end: Optional[int] = None) -> int: ...
