"""What an analysis recomputed, in the status bar's words.

>>> recompute_summary(("review", "verdicts"), 1, 0.042)
'Recomputed the proposal review, the verdicts and 1 model in 0.04 s.'
>>> recompute_summary((), 0, 0.001)
'Nothing to recompute: labels refreshed in 0.00 s.'
>>> recompute_summary(("profile", "design", "summary"), 0, 0.2)
'Recomputed column profiles, the design and the cross-products of new or recoded columns in 0.20 s.'
>>> recompute_summary(("profile", "sample", "design", "summary", "rows"), 0, 2.5)
'Recomputed column profiles, the analytic sample, the design and the cross-products of every row in 2.50 s.'
"""

from __future__ import annotations

from collections.abc import Sequence

__all__ = ["STAGE_WORDS", "recompute_summary"]

#: Each pipeline stage as the status bar names it (stages users need not hear of are absent).
STAGE_WORDS = {
    "graph": "the graph criteria",
    "review": "the proposal review",
    "profile": "column profiles",
    "missing": "missing values",
    "sample": "the analytic sample",
    "term": "column coding",
    "outcomes": "the outcome",
    "design": "the design",
    # extended by the new columns' products with the others (no other row read)
    "summary": "the cross-products of new or recoded columns",
    "evidence": "the evidence",
    "verdicts": "the verdicts",
    "pictures": "the collinearity pictures",
    "modification": "effect modification",
    "residual": "the residual-confounding check",
}


def recompute_summary(stages: Sequence[str], models: int, seconds: float) -> str:
    """One sentence: the stages a run computed, the models it fitted, how long it took."""
    words = dict(STAGE_WORDS)
    if "rows" in stages:  # the sample's rows changed (or a first run): all were read
        words["summary"] = "the cross-products of every row"
    parts = [words[s] for s in stages if s in words]
    if models:
        parts.append(f"{models} model{'s' if models != 1 else ''}")
    if not parts:
        return f"Nothing to recompute: labels refreshed in {seconds:.2f} s."
    listed = parts[0] if len(parts) == 1 else ", ".join(parts[:-1]) + " and " + parts[-1]
    return f"Recomputed {listed} in {seconds:.2f} s."
