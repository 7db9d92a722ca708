from hazards.models import identity  # noqa: F401  (identity changes in the trail)
from hazards.models.indicators import IndicatorSnapshot, PendingRecompute, ProcessClassTally
from hazards.models.measurements import (
    BaselineMethod,
    CalorimetryRun,
    CalorimetrySeries,
    DecompositionCurve,
    DecompositionPeak,
    DecompositionTest,
)
from hazards.models.measures import (
    Measure,
    MeasureKind,
    MeasurePolicy,
    MeasureStatus,
    ReliefSystem,
)
from hazards.models.preferences import DisplayPreference
from hazards.models.process import Process, ReactionStep, Site
from hazards.models.reference import Solvent, Vessel
from hazards.models.tokens import ApiToken, ServiceAccount

__all__ = [
    "ApiToken",
    "BaselineMethod",
    "CalorimetryRun",
    "CalorimetrySeries",
    "DecompositionCurve",
    "DecompositionPeak",
    "DecompositionTest",
    "DisplayPreference",
    "IndicatorSnapshot",
    "Measure",
    "MeasureKind",
    "MeasurePolicy",
    "MeasureStatus",
    "PendingRecompute",
    "ProcessClassTally",
    "Process",
    "ReactionStep",
    "ReliefSystem",
    "Site",
    "Solvent",
    "ServiceAccount",
    "Vessel",
]

from hazards.models import triggers  # noqa: E402,F401  (registers the database triggers)
