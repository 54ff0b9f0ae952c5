"""Per-row float columns of a replay, kept on disk so memory does not grow with the trace.

A replay's accuracy figures need every evaluated row's time, ETA and interval,
and, when the crossing comes from the trace itself, which rows are evaluated
is known only at the end. A :class:`ColumnSpool` holds those columns
exactly (float64) in a block of ``block_rows`` rows in memory; full blocks go
to an anonymous temporary file (deleted when closed), which the operating
system keeps in its page cache rather than in the process. :meth:`chunks`
reads them back a block at a time as numpy arrays, as often as needed.

Memory: the block in memory (``8 * columns * block_rows`` bytes) plus one
int per block; nothing per row. A trace shorter than one block never
touches the disk.
"""
import tempfile
from array import array

import numpy as np

BLOCK_ROWS = 16384


class ColumnSpool:
    """Append-only float64 columns, spilled to a temporary file a block at a time.

    ``columns``: the number of columns (each row is that many floats; NaN
    for a missing value). ``block_rows``: rows per block in memory (default
    :data:`BLOCK_ROWS`).
    """

    def __init__(self, columns, block_rows=None):
        if block_rows is None:
            block_rows = BLOCK_ROWS
        if columns < 1 or block_rows < 1:
            raise ValueError("columns and block_rows must be positive")
        self.columns = columns
        self.block_rows = block_rows
        self.rows = 0
        self._block = [array("d") for _ in range(columns)]
        self._blocks = []          # rows in each block written to the file
        self._file = None

    def __len__(self):
        return self.rows

    def append(self, *values):
        """Add one row: ``columns`` floats (NaN for none)."""
        if len(values) != self.columns:
            raise ValueError("a row has %d values, not %d" % (self.columns, len(values)))
        for col, v in zip(self._block, values):
            col.append(v)
        self.rows += 1
        if len(self._block[0]) >= self.block_rows:
            self._spill()

    def _spill(self):
        if self._file is None:
            self._file = tempfile.TemporaryFile(prefix="tinytherm-spool-")
        self._file.seek(0, 2)
        for col in self._block:
            col.tofile(self._file)
        self._blocks.append(len(self._block[0]))
        self._block = [array("d") for _ in range(self.columns)]

    def chunks(self):
        """Iterate over the rows in order, a block at a time: tuples of float arrays.

        Each tuple holds one numpy array per column (a block read back from
        the file, or a copy of the block still in memory).
        """
        if self._blocks:
            self._file.flush()
            offset = 0
            for n in self._blocks:
                self._file.seek(offset)
                flat = np.fromfile(self._file, dtype=np.float64, count=n * self.columns)
                if len(flat) != n * self.columns:
                    raise OSError("the spool file was cut short")
                offset += flat.nbytes
                yield tuple(flat.reshape(self.columns, n))
        if len(self._block[0]):
            # copies, so the block can still grow after a read
            yield tuple(np.array(col, dtype=np.float64) for col in self._block)

    def close(self):
        """Delete the temporary file (the spool is empty afterwards)."""
        if self._file is not None:
            self._file.close()
            self._file = None
        self._blocks = []
        self._block = [array("d") for _ in range(self.columns)]
        self.rows = 0

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()
        return False
