"""The state the indicator steps of :func:`calcs.scenario.assess_step` share (private)."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from calcs.scenario_types import AssessmentSettings, StepInputs
from calcs.vapour import AntoineInputs


@dataclass
class _Ctx:
    s: StepInputs
    cfg: AssessmentSettings
    out: dict[str, Any] = field(default_factory=dict)
    warnings: list[str] = field(default_factory=list)
    methods: dict[str, str] = field(default_factory=dict)
    parameters: dict[str, Any] = field(default_factory=dict)
    refs: list[str] = field(default_factory=list)
    q_model: tuple[float, float, float] | None = None  # (E_a, T_ref, q_ref)
    antoine: AntoineInputs | None = None
    specific_heat: float | None = None
    series_peak_w_per_kg: float | None = None
    lowest_measured_k: float | None = None  # lowest temperature the decomposition data saw
    kinetics: Any = None  # the fitted decomposition model TD24 came from, if any
    point: Any = None  # calcs.operating_point.PointInputs of a semi-batch step, if any

    def ref(self, *keys: str) -> None:
        self.refs.extend(k for k in keys if k not in self.refs)

    def warn(self, text: str | None) -> None:
        if text and text not in self.warnings:
            self.warnings.append(text)
