"""The analysis settings a user chooses once per estimate and keeps in the project file."""

from __future__ import annotations

from dataclasses import asdict, dataclass, field
from typing import Any

from engine.analysis import DEFAULT_LEVELS, DEFAULT_TOLERANCE


@dataclass
class Settings:
    levels: tuple[float, ...] = DEFAULT_LEVELS
    tolerance: float = DEFAULT_TOLERANCE
    method: str = "auto"
    trials: int = 100_000
    # A fixed seed by default, so the same estimate gives the same simulated figures and an
    # edit moves the total by the edit's effect alone.
    seed: int | None = 1
    sampling: str = "lhs"
    unit: str = ""  # currency or unit label, e.g. "EUR" or "working days"
    notes: str = ""
    extra: dict[str, Any] = field(default_factory=dict)

    def analyze_kwargs(self) -> dict[str, Any]:
        """The keyword arguments of engine.analyze these settings stand for."""
        return {
            "method": self.method,
            "levels": tuple(self.levels),
            "trials": self.trials,
            "seed": self.seed,
            "sampling": self.sampling,
            "tolerance": self.tolerance,
        }

    def to_dict(self) -> dict[str, Any]:
        d = asdict(self)
        d["levels"] = list(self.levels)
        return d
