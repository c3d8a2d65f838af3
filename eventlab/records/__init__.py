"""Record layer: the only place in eventlab that reads or writes COMTRADE."""

from eventlab.records.model import AnalogChannel, RateSegment, Record, StatusChannel
from eventlab.records.reader import read_record

__all__ = ["AnalogChannel", "RateSegment", "Record", "StatusChannel", "read_record"]
