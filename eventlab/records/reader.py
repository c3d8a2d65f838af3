"""COMTRADE reader (being written: see issue on the record layer)."""

from __future__ import annotations


def read_record(path, values: str = "primary"):
    raise NotImplementedError("the COMTRADE reader is being written")
