"""Names of our own: the words the tool once shared with existing programs are gone from what it ships.

The option that sets how the bad rate moves across a characteristic is ``bad_rate_shape`` (from-data,
falls, rises, any); a characteristic's bins are joined into classes (``classes``, ``max_classes``,
``min_class_share``, class numbers, the best classing); levels never seen at build time go to the
unseen bin. The old words stay in one place only, ``scorecard/settings/renamed.py``, which turns
them into a clear message (settings files) or carries them over (model files of format 1).
"""

from __future__ import annotations

import re
from pathlib import Path

from scorecard.terms import BAD_RATE_SHAPES

ROOT = Path(__file__).resolve().parent.parent
OLD_NAMES = re.compile(
    r"\btrend|\bgroups?\b|\bgrouping\b|max_groups|min_group_share|fallback|\bstray\b|\"ascending\"|\"descending\"",
    re.IGNORECASE,
)
# text that is not ours to rename: a published title, and a library's own attribute
ALLOWED = (
    '"On grouping for maximum homogeneity"',  # W. D. Fisher's paper, JASA 1958, cited as the source of the DP
    "chart.grouping = ",  # openpyxl's BarChart attribute
    "GROUP BY", "GROUPING SETS",  # SQL's own words, in the queries of the engines
)
KEEPER = ROOT / "scorecard" / "settings" / "renamed.py"


def _shipped_files():
    for folder in ("scorecard", "templates", "demo"):
        for path in sorted((ROOT / folder).rglob("*")):
            if path.suffix in (".py", ".html", ".css", ".toml", ".md") and path != KEEPER:
                yield path
    yield ROOT / "README.md"


def test_no_old_name_is_left_in_the_package_the_templates_the_demo_or_the_readme():
    found = []
    for path in _shipped_files():
        for number, line in enumerate(path.read_text(encoding="utf-8").splitlines(), start=1):
            for allowed in ALLOWED:
                line = line.replace(allowed, "")
            if OLD_NAMES.search(line):
                found.append(f"{path.relative_to(ROOT)}:{number}: {line.strip()}")
    assert not found, "\n".join(found)


def test_the_old_names_live_in_one_place():
    text = KEEPER.read_text(encoding="utf-8")
    for old in ("trend", "max_groups", "min_group_share", "groups", "fallback_bin", "ascending", "descending"):
        assert old in text


# The single-bend shapes are ours too: 'falls-then-rises' and 'rises-then-falls', never the usual
# library words for them. checks/ (the KS gap where it peaks) and fitter/ (the convex cone of the
# separation test) speak of other things and are not searched.
LIBRARY_SHAPE_WORDS = re.compile(r"\bpeak|\bvalley|\bconvex|\bconcave|\bu-?shaped?\b|\binverted[- ]u\b|\bhump", re.IGNORECASE)


def test_the_bent_shapes_have_names_of_our_own():
    found = []
    for path in _shipped_files():
        if {"checks", "fitter"} & set(path.relative_to(ROOT).parts):
            continue
        for number, line in enumerate(path.read_text(encoding="utf-8").splitlines(), start=1):
            if LIBRARY_SHAPE_WORDS.search(line):
                found.append(f"{path.relative_to(ROOT)}:{number}: {line.strip()}")
    assert not found, "\n".join(found)
    assert {"falls-then-rises", "rises-then-falls"} <= set(BAD_RATE_SHAPES)
