"""eventlab: post-event analysis of line faults from COMTRADE records."""

from eventlab.errors import (
    ChannelMapError,
    EventlabError,
    FitDidNotConverge,
    ModelError,
    RecordFormatError,
    SignalError,
)
from eventlab.records.reader import read_record

__all__ = [
    "ChannelMapError",
    "EventlabError",
    "FitDidNotConverge",
    "ModelError",
    "RecordFormatError",
    "SignalError",
    "read_record",
]

__version__ = "0.1.0"
