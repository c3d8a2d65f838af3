"""Signal layer: phasors, frequency, sequence quantities, timeline, classification.

Arrays in, arrays and small frozen dataclasses out; no file I/O.
"""

from eventlab.signals.classify import Classification, classify_fault
from eventlab.signals.frequency import estimate_frequency, tracked_phasors
from eventlab.signals.phasors import FILTER_KINDS, dft_phasors, mimic_phasors, moving_rms
from eventlab.signals.sequence import sequence_phasors
from eventlab.signals.timeline import Timeline, build_timeline

__all__ = ["FILTER_KINDS", "Classification", "Timeline", "build_timeline", "classify_fault",
           "dft_phasors", "estimate_frequency", "mimic_phasors", "moving_rms",
           "sequence_phasors", "tracked_phasors"]
