"""A model family is one object: the rest of the program asks it, never compares its code.

The registry (``analysis/families``), the vocabulary's ``Family`` and the
``check --json`` schema list the same families in the same order, and no
module outside ``analysis/families/`` and ``vocabulary.py`` branches on a
family's code — so adding a family touches its own module, the registry and
its words (README, "Where to change what").
"""

from __future__ import annotations

import ast
import json
from importlib import resources
from pathlib import Path

import pytest

import covariscope
from covariscope.analysis.families import FAMILIES, FAMILY_CODES, Fitter, family_of
from covariscope.errors import DataError
from covariscope.vocabulary import FAMILY_TERMS, Family

SRC = Path(covariscope.__file__).parent
#: where a family's code may be compared: the families themselves and their words
ALLOWED = (SRC / "analysis" / "families", SRC / "vocabulary.py")
CODES = frozenset(f.value for f in Family)
#: the vocabulary's derived sets, whose membership test is a comparison of codes too
DERIVED_SETS = frozenset({"RATIO_FAMILIES", "NONCOLLAPSIBLE_FAMILIES"})


def _names_family(node: ast.expr) -> bool:
    """A family code as a literal, a ``Family.X`` member, a derived set, or a
    tuple/list/set of codes."""
    if isinstance(node, ast.Constant):
        return node.value in CODES
    if isinstance(node, ast.Attribute) and isinstance(node.value, ast.Name):
        return node.value.id == "Family"
    if isinstance(node, ast.Name):
        return node.id in DERIVED_SETS
    if isinstance(node, ast.Tuple | ast.List | ast.Set):
        return any(_names_family(e) for e in node.elts)
    return False


def family_branches(source: str) -> list[int]:
    """Lines that compare against a family's code, or tabulate by it (a dict
    literal keyed by two or more family codes)."""
    lines = []
    for node in ast.walk(ast.parse(source)):
        if isinstance(node, ast.Compare) and any(
            _names_family(n) for n in (node.left, *node.comparators)
        ):
            lines.append(node.lineno)
        elif isinstance(node, ast.Dict):
            keys = [k.value for k in node.keys if isinstance(k, ast.Constant)]
            if sum(k in CODES for k in keys) >= 2:
                lines.append(node.lineno)
        elif isinstance(node, ast.MatchValue) and _names_family(node.value):
            lines.append(node.lineno)
    return sorted(lines)


def _allowed(path: Path) -> bool:
    return any(path == a or a in path.parents for a in ALLOWED)


def test_no_module_branches_on_a_family_code():
    found = []
    for path in sorted(SRC.rglob("*.py")):
        if _allowed(path):
            continue
        for line in family_branches(path.read_text("utf-8")):
            found.append(f"{path.relative_to(SRC)}:{line}")
    assert not found, (
        "These lines compare a model family's code; ask the family object instead "
        "(covariscope.analysis.families.family_of(code).ratio, .survival, .fitter, ...): "
        + ", ".join(found)
    )


@pytest.mark.parametrize(
    ("source", "hit"),
    [
        ('if family == "cox":\n    pass\n', [1]),
        ('x = fit.family != "linear"\n', [1]),
        ('ok = family in ("logistic", "risk_ratio")\n', [1]),
        ("ok = f is Family.COX\n", [1]),
        ("ratio = family in RATIO_FAMILIES\n", [1]),
        ('WORD = {"logistic": "odds", "cox": "hazard"}\n', [1]),
        ('match family:\n    case "cox":\n        pass\n', [2]),
        # not a family: one key of a table, a form of a term, a docstring
        ('row = {"linear": 1.0, "spline": 2.0}\n', []),
        ('form = "linear"\n', []),
        ('"""family == "cox" in a docstring"""\n', []),
    ],
)
def test_the_scan_sees_a_family_branch(source, hit):
    # the scan itself must be able to fail: each branching form is caught
    assert family_branches(source) == hit


def test_registry_vocabulary_and_schema_list_the_same_families():
    assert [f.code for f in FAMILIES] == list(Family) == list(FAMILY_TERMS)
    assert tuple(f.value for f in Family) == FAMILY_CODES
    text = (resources.files("covariscope") / "schemas" / "check.schema.json").read_text("utf-8")
    schema = json.loads(text)
    assert schema["properties"]["family"]["enum"] == list(FAMILY_CODES)
    measures = set(schema["properties"]["effect_measure"]["enum"])
    for f in FAMILIES:
        assert {f.term.effect_measure, f.term.count_measure} <= measures, f.code


def test_each_family_is_complete():
    for f in FAMILIES:
        assert f.fields, f.code
        assert f.outcome_key in f.keys
        assert f.recipe.python, f.code
        assert f.recipe.r, f.code
        assert f.recipe.stata, f.code
        # a GLM needs its link; the others have none
        assert (f.link is not None) == (f.fitter is Fitter.GLM), f.code
        assert f.crude_params == (2 if f.intercept else 1)
        # only the least-squares and GLM fitters have a row-sum path
        assert f.row_sums == (f.fitter is not Fitter.COX), f.code
        assert set(f.outcome_types) <= {"binary", "count", "continuous"}
        if f.outcome_types:
            assert f.outcome_need, f.code


def test_the_registry_refuses_a_module_without_its_family(monkeypatch):
    from covariscope.analysis.families import registry

    class Mislabelled:
        __name__ = "covariscope.analysis.families.cox"
        FAMILY = family_of("linear")

    monkeypatch.setattr(registry, "import_module", lambda name: Mislabelled)
    with pytest.raises(ImportError, match="must export FAMILY"):
        registry._load(Family.COX)


def test_family_of_names_the_known_codes():
    assert family_of("cox").survival
    assert not family_of("linear").survival
    with pytest.raises(DataError, match="linear, logistic, risk_ratio, cox"):
        family_of("probit")
