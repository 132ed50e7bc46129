"""CSV/Excel -> series + problems (1-based file row numbers). STUB: to be written."""

from __future__ import annotations

from pathlib import Path

from forecasting_core._results import Table

#: Largest file accepted, in bytes (20 MB).
MAX_FILE_BYTES = 20 * 1024 * 1024


def read_table(source: str | Path | bytes, *, name: str | None = None) -> Table:
    """Read a wide or long CSV/Excel file into series and problems.

    Parameters
    ----------
    source : str, Path or bytes
        A file path, or the raw bytes of an upload (then give ``name``).
    name : str, optional
        File name to report (and to detect ``.xlsx``) when ``source`` is bytes.
    """
    raise NotImplementedError
