"""The analysis in plain words: where the normal shortcut holds, where it fails, and why.

Thresholds here decide only which reasons are worth saying; they are rules of thumb
(common practice, no source), and every number said is the measured one.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING

from engine.shortcut.diagnostics import ItemDriver

if TYPE_CHECKING:
    from engine.analysis import Diagnostics, LevelRow
    from engine.dependence.correlation import Dependence

FEW_ITEMS = 10  # common practice, no source
DOMINANT_SHARE = 0.4  # common practice, no source
NOTABLE_SKEW = 0.3  # common practice, no source
NOTABLE_KURTOSIS = 1.0  # common practice, no source
RARE_EVENT = 0.2  # probability of occurrence below which an event counts as rare
NOTABLE_SPREAD_CHANGE = 0.05  # correlation moves the total's sd by 5% (common practice, no source)


# Past this a skewness or kurtosis says only that a far tail makes it: its digits are noise.
LARGEST_SHAPE = 1000.0


def shape_text(x: float) -> str:
    """A skewness or excess kurtosis in words: two decimals, or 'over 1,000'."""
    if abs(x) < LARGEST_SHAPE:
        return f"{x:.2f}"
    return f"over {LARGEST_SHAPE:,.0f}" if x > 0 else f"below -{LARGEST_SHAPE:,.0f}"


def compact(x: float) -> str:
    """12 300 -> '12.3 k', 4 100 000 -> '4.1 M': how estimators say sums aloud."""
    a = abs(x)
    for size, suffix in ((1e9, " bn"), (1e6, " M"), (1e3, " k")):
        if a >= size:
            return f"{x / size:.3g}{suffix}" if a < 100 * size else f"{x / size:,.0f}{suffix}"
    return f"{x:.3g}"


def count(n: int, noun: str = "", plural: str = "") -> str:
    """'1,999,000 pairs', '1 pair': the noun agrees with the number."""
    text = f"{n:,}"
    if not noun:
        return text
    return f"{text} {noun if n == 1 else plural or noun + 's'}"


def reasons_for(
    diag: Diagnostics, drivers: Sequence[ItemDriver], dependence: Dependence | None = None
) -> list[str]:
    reasons: list[str] = [] if dependence is None else dependence_reasons(dependence)
    if diag.uncertain_count < FEW_ITEMS:
        reasons.append(
            f"only {count(diag.uncertain_count, 'uncertain item')}: too few for the central limit "
            "theorem to make the total normal"
        )
    if diag.largest_variance_share >= DOMINANT_SHARE:
        reasons.append(
            f"one item dominates: '{diag.largest_item}' carries "
            f"{100 * diag.largest_variance_share:.0f}% of the variance, so the total takes its shape"
        )
    rare = [d for d in drivers if d.probability < RARE_EVENT]
    if diag.risk_event_count:
        share = 100 * diag.risk_event_variance_share
        events = count(diag.risk_event_count, "risk event")
        carry = "carries" if diag.risk_event_count == 1 else "carry"
        text = f"{events} {carry} {share:.0f}% of the variance"
        if rare:
            which = "it is" if diag.risk_event_count == 1 else f"{len(rare)} of them"
            text += (
                f"; {which} rare (below {RARE_EVENT:.0%} likely), which lengthens the right tail"
            )
        if share >= 20 or rare:
            reasons.append(text)
    if abs(diag.skewness) >= NOTABLE_SKEW:
        side = "right" if diag.skewness > 0 else "left"
        skewers = [d for d in drivers if d.skew_share > 0.15] if diag.skewness > 0 else []
        named = ", ".join(f"'{d.name}'" for d in sorted(skewers, key=lambda d: -d.skew_share)[:3])
        text = f"the total is skewed to the {side} (skewness {shape_text(diag.skewness)})"
        if named:
            text += f", driven by {named}"
        reasons.append(text)
    if diag.excess_kurtosis >= NOTABLE_KURTOSIS:
        reasons.append(
            f"the total has heavy tails (excess kurtosis {shape_text(diag.excess_kurtosis)}), "
            "more extreme outcomes than the normal allows"
        )
    if not diag.cornish_fisher_monotone:
        reasons.append(
            "the skew and kurtosis fold the Cornish–Fisher expansion back within the "
            "percentiles reported, so its column is unreliable"
        )
    return reasons


def dependence_reasons(dependence: Dependence) -> list[str]:
    """Correlation first: it is why the independence shortcut misses when it does."""
    reasons = []
    dependent, independent = dependence.sd_dependent, dependence.sd_independent
    if independent > 0 and abs(dependent / independent - 1) >= NOTABLE_SPREAD_CHANGE:
        sign, effect = (
            ("positive", "widens") if dependent > independent else ("negative", "narrows")
        )
        reasons.append(
            f"{sign} correlation {effect} the total: sd {compact(dependent)} against "
            f"{compact(independent)} if independent"
        )
    if dependence.repaired and dependence.largest_change:
        a, b, old, new = dependence.largest_change
        reasons.append(
            "the stated correlations were not a valid correlation matrix; the nearest valid one "
            f"was used (largest change '{a}'-'{b}' {old:.2f} -> {new:.2f})"
        )
    if dependence.pearson_repaired:
        reasons.append(
            "the normal-score correlations induced for the rank targets were not a valid matrix "
            "and were repaired to the nearest valid one"
        )
    return reasons


def summary_sentence(rows: Sequence[LevelRow], reasons: Sequence[str]) -> str:
    """E.g. 'The normal shortcut holds at P50 and P80; understates P90 by 3.9% (310 k):
    3 risk events carry 45% of the variance.'"""
    holds = [r for r in rows if r.holds]
    fails = [r for r in rows if not r.holds]
    parts = []
    if holds:
        parts.append("holds at " + _join([f"P{r.level:g}" for r in holds]))
    for r in fails:
        parts.append(f"{r.verdict} P{r.level:g} by {abs(r.gap_pct):.1f}% ({compact(abs(r.gap))})")
    text = "The normal shortcut " + "; ".join(parts)
    if fails and reasons:
        text += ": " + reasons[0]
    return text + "."


def _join(words: Sequence[str]) -> str:
    return words[0] if len(words) == 1 else ", ".join(words[:-1]) + " and " + words[-1]
