"""Record layer: the only place in eventlab that reads or writes COMTRADE.

Public API: :func:`read_record`, :func:`write_record`, :func:`make_record`,
:func:`select`, :func:`eventlab.records.roles.map_terminals` and the
:class:`Record` dataclasses.
"""

from eventlab.records.build import make_record, select
from eventlab.records.model import AnalogChannel, RateSegment, Record, StatusChannel
from eventlab.records.reader import read_record
from eventlab.records.writer import write_record

__all__ = ["AnalogChannel", "RateSegment", "Record", "StatusChannel", "make_record",
           "read_record", "select", "write_record"]
