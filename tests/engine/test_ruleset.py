"""Rulesets as data: every value has a source; user rulesets validate with clear errors."""

from __future__ import annotations

from typing import Any

import pytest

from engine import RulesetError, builtin_ruleset_ids, load_builtin, ruleset_from_data
from engine.ruleset import MARKERS


def test_builtin_rulesets_present() -> None:
    """Both rulesets the contract asks for are packaged (BS 7671:2018+A2:2022 default, IEC 60364)."""
    assert {"bs7671-2018-a2", "iec-60364"} <= set(builtin_ruleset_ids())


@pytest.mark.parametrize("rid", ["bs7671-2018-a2", "iec-60364"])
def test_every_builtin_value_names_a_source_and_marker(rid: str) -> None:
    """Every packaged value carries a non-empty source and one of the five markers."""
    rules = load_builtin(rid)
    assert rules.sources, "a ruleset lists the sources it relies on"
    count = 0
    for entries in rules.sections.values():
        for entry in entries.values():
            assert entry.source.strip()
            assert entry.marker in MARKERS
            count += 1
    assert count > 10


def _doc(**extra: Any) -> dict[str, Any]:
    return {"id": "local", "title": "Local code", **extra}


def test_user_ruleset_overrides_one_value_of_its_base() -> None:
    """A local-code file with a base overrides only the entries it names."""
    base = load_builtin("bs7671-2018-a2")
    doc = _doc(base="bs7671-2018-a2", sections={
        "defaults": {"nominal_voltage_v": {"value": 240, "source": "local code 1.2", "marker": "standard"}}
    })
    rules = ruleset_from_data(doc)
    assert rules.value("defaults", "nominal_voltage_v") == 240
    assert rules.value("temperature", "alpha_per_k") == base.value("temperature", "alpha_per_k")


@pytest.mark.parametrize(
    ("doc", "pointer"),
    [
        ({"title": "x"}, "/id"),
        ({"id": "x"}, "/title"),
        (_doc(sections={"defaults": {"phases": {"value": 1}}}), "/sections/defaults/phases"),
        (_doc(sections={"defaults": {"phases": {"value": 1, "source": "s", "marker": "Q"}}}),
         "/sections/defaults/phases"),
        (_doc(sections={"defaults": {"phases": 1}}), "/sections/defaults/phases"),
        (_doc(base="no-such"), "/base"),
        (_doc(colour="red"), "/"),
    ],
)
def test_invalid_user_ruleset_is_a_clear_error(doc: dict[str, Any], pointer: str) -> None:
    """Each malformed document is refused with a pointer to the member at fault."""
    with pytest.raises(RulesetError) as info:
        ruleset_from_data(doc)
    assert info.value.field == pointer


def test_unknown_builtin_lists_the_valid_ids() -> None:
    """An unknown ruleset id is an error that names the ids that exist."""
    with pytest.raises(RulesetError, match="bs7671-2018-a2"):
        load_builtin("nope")


def test_markers_are_words_and_old_codes_still_load() -> None:
    """Markers read as words (no "C2", which is also a trade observation code); an older file's codes load."""
    assert set(MARKERS) == {"standard", "secondary", "memory", "practice", "derived"}
    for rid in builtin_ruleset_ids():
        for entries in load_builtin(rid).sections.values():
            assert all(entry.marker in MARKERS for entry in entries.values())
    old = ruleset_from_data(_doc(base="bs7671-2018-a2", sections={"defaults": {
        "nominal_voltage_v": {"value": 240, "source": "local code 1.2", "marker": "C2"},
        "phases": {"value": 1, "source": "local code 1.3", "marker": "M"}}}))
    assert old.entry("defaults", "nominal_voltage_v").marker == "secondary"
    assert old.entry("defaults", "phases").as_dict()["marker"] == "memory"
