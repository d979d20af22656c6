"""The trade's words: every field a sentence may name has one, and sentences use them."""

from __future__ import annotations

from engine import BOARD_FIELDS, FIELDS, INSTALLATION_FIELDS, build_record, verify
from engine.words import FIELD_WORDS, word_for, words


def test_every_field_has_a_word() -> None:
    """Circuit, board and installation fields all have a word in the one table."""
    assert set(FIELDS) | set(BOARD_FIELDS) | set(INSTALLATION_FIELDS) <= set(FIELD_WORDS)


def test_words_keep_a_qualifier_and_join_as_a_sentence() -> None:
    """A feeder's reading keeps its reference; several read as a list (BS 7671 symbols: R1+R2, Zs, IΔn)."""
    assert word_for("DB1/5 r1_r2_ohm") == "DB1/5 R1+R2"
    assert word_for("design_current_a or device_rating_a") == "Ib or In"
    assert words(["zs_ohm", "ze_ohm", "rcd_residual_ma"]) == "Zs, Ze and IΔn"
    assert word_for("no_such_field") == "no_such_field"


def test_detail_sentences_name_no_field() -> None:
    """A record missing most things: machines still get field names in inputs.missing, people none in
    the sentence."""
    record, _ = build_record({"board": "DB1", "circuit": "1", "device": "B32", "zs_ohm": 0.8,
                              "pfc_ka": 1.0, "rcd_trip_ms": 20, "r1_r2_ohm": 0.4, "ring_r1_ohm": 0.5,
                              "ring_rn_ohm": 0.5, "ring_r2_ohm": 0.8, "ir_le_mohm": 200})
    assert record is not None
    [verdict] = verify([record])
    named = [c.detail for c in verdict.checks if any(f"{n}" in c.detail for n in FIELDS if "_" in n)]
    assert named == []
    assert any(c.inputs.get("missing") for c in verdict.checks)
