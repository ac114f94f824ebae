"""Folder runs: the runner (local processes or a Dask cluster, resume state) and the
summary workbook and CSV."""

__all__: list[str] = []
