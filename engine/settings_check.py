"""The settings' problems as `analyze` would raise them, found without computing anything, so
that `check` refuses exactly what `report` refuses."""

from __future__ import annotations

from engine.analysis import _check_correlated_settings, _check_settings, correlated_pairs
from engine.items import Estimate, InputError, Problem
from engine.settings import Settings


def settings_problems(estimate: Estimate, settings: Settings) -> list[Problem]:
    """Every problem `analyze(estimate, **settings.analyze_kwargs())` would refuse the
    settings for (the items' own problems are listed by the caller), and the stored settings
    a project file held that could not be used (they would otherwise be silently replaced)."""
    stored = list(estimate.summary.get("settings_problems", []))
    return stored + _analysis_problems(estimate, settings)


def _analysis_problems(estimate: Estimate, settings: Settings) -> list[Problem]:
    kwargs = settings.analyze_kwargs()
    try:
        _check_settings(
            estimate,
            kwargs["method"],
            kwargs["levels"],
            kwargs["trials"],
            kwargs["sampling"],
            kwargs["tolerance"],
        )
    except InputError as bad:
        return list(bad.problems)
    if estimate.problems:
        return []  # the stated matrix cannot be built from items that have problems
    try:
        linked = correlated_pairs(estimate)
        if linked:
            _check_correlated_settings(
                kwargs["method"], kwargs["trials"], len(estimate.items), linked
            )
    except InputError as bad:
        return list(bad.problems)
    return []
