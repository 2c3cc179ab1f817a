"""What an analysis recomputed, in the status bar's words.

>>> recompute_summary(("review", "verdicts"), 1, 0.042)
'Recomputed the proposal review, the verdicts and 1 model in 0.04 s.'
>>> recompute_summary((), 0, 0.001)
'Nothing to recompute: labels refreshed in 0.00 s.'
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
    "summary": "cross-products",
    "evidence": "the evidence",
    "verdicts": "the verdicts",
    "pictures": "the collinearity pictures",
    "modification": "effect modification",
    "residual": "the residual-confounding check",
}


def recompute_summary(stages: Sequence[str], models: int, seconds: float) -> str:
    """One sentence: the stages a run computed, the models it fitted, how long it took."""
    parts = [STAGE_WORDS[s] for s in stages if s in STAGE_WORDS]
    if models:
        parts.append(f"{models} model{'s' if models != 1 else ''}")
    if not parts:
        return f"Nothing to recompute: labels refreshed in {seconds:.2f} s."
    listed = parts[0] if len(parts) == 1 else ", ".join(parts[:-1]) + " and " + parts[-1]
    return f"Recomputed {listed} in {seconds:.2f} s."
