"""Arc-model parameters from records (direct: arc current and voltage measured; indirect:
terminal records and the line description)."""

from recordscan.fit.direct import DirectFitOptions, fit_direct
from recordscan.fit.indirect import IndirectFitOptions, fit_indirect
from recordscan.fit.record import ArcPeriods, find_arc_periods, fit_record
from recordscan.fit.result import ArcFitResult, ParameterEstimate

fit_arc = fit_record

__all__ = [
    "ArcFitResult",
    "ArcPeriods",
    "DirectFitOptions",
    "IndirectFitOptions",
    "ParameterEstimate",
    "find_arc_periods",
    "fit_arc",
    "fit_direct",
    "fit_indirect",
    "fit_record",
]
