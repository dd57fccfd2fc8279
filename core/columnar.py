"""A Parquet file read in batches (pyarrow). Its columns carry types: numbers and texts are read;
dates, times, durations, true/false and nested values in a selected column are refused by name,
as a date in a CSV or a sheet is (no silent turning of a date into an epoch number).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from .errors import DataError, message
from .textfile import describe_bytes

__all__ = ["ParquetSource"]


def _unreadable(fname, exc_or_text) -> DataError:
    got = exc_or_text if isinstance(exc_or_text, str) else type(exc_or_text).__name__
    return DataError(message(f"File '{fname}'", "a readable Parquet file", got))


class ParquetSource:
    """A Parquet file opened for reading: ``columns``, ``notices``, ``first_row`` and ``chunks``."""

    kind = "parquet"
    comma_decimal = False
    first_row = 1
    header_row = 1

    def __init__(self, path):
        import pyarrow.parquet as pq

        self.path = Path(path)
        self.fname = self.path.name
        self.notices: list = []
        with self.path.open("rb") as fh:
            head = fh.read(4096)
        if not head.startswith(b"PAR1"):
            other = describe_bytes(self.path, head)
            if other:
                raise DataError(message(f"File '{self.fname}'", "a readable Parquet file", other[0], other[1]))
            if head.strip() and b"\x00" not in head:
                raise DataError(message(f"File '{self.fname}'", "a readable Parquet file", "text",
                                        "If it is a CSV or text file, give it the .csv extension"))
        try:
            self._file = pq.ParquetFile(self.path)
            schema = self._file.schema_arrow
        except OSError as exc:
            if exc.errno is not None:
                raise
            raise _unreadable(self.fname, exc) from None
        except Exception as exc:  # pyarrow raises many unrelated types for a corrupt file
            raise _unreadable(self.fname, exc) from None
        self.columns = [str(n) for n in schema.names]
        self._types = {str(f.name): f.type for f in schema}
        repeated = sorted({n for n in self.columns if self.columns.count(n) > 1})
        if repeated:
            raise DataError(message(f"File '{self.fname}' header", "distinct column names",
                                    "repeated " + ", ".join(repr(n) for n in repeated), "Rename the repeated columns"))

    def check_types(self, columns) -> None:
        """Refuse a selected column whose type is not a number or text."""
        import pyarrow as pa

        for c in columns:
            t = self._types[c]
            if pa.types.is_dictionary(t):
                t = t.value_type
            if (pa.types.is_integer(t) or pa.types.is_floating(t) or pa.types.is_decimal(t)
                    or pa.types.is_string(t) or pa.types.is_large_string(t) or pa.types.is_null(t)):
                continue
            if pa.types.is_temporal(t):
                kind = "dates and times"
                fix = "Convert the column to numbers (for example seconds since the start) first"
            elif pa.types.is_boolean(t):
                kind, fix = "true/false values", "Store the column as numbers"
            else:
                kind, fix = "values that are not numbers", "Store the column as numbers"
            raise DataError(message(f"File '{self.fname}' column '{c}'", "numbers", f"{t} values ({kind})", fix))

    def chunks(self, columns, chunk_rows: int):
        """Yield (row numbers, {column: pyarrow array}) ``chunk_rows`` rows at a time (header = row 1)."""
        offset = 0
        wanted = list(dict.fromkeys(columns))
        try:
            for batch in self._file.iter_batches(batch_size=chunk_rows, columns=wanted):
                rows = np.arange(offset, offset + batch.num_rows, dtype=np.int64) + 2
                offset += batch.num_rows
                yield rows, {c: batch.column(c) for c in wanted}
        except DataError:
            raise
        except OSError as exc:
            if exc.errno is not None:
                raise
            raise _unreadable(self.fname, exc) from None
        except Exception as exc:  # a damaged page shows only when it is read
            raise _unreadable(self.fname, exc) from None
