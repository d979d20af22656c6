"""The json adapter: list, {"circuits": [...]}, NDJSON, streamed; bad records cost themselves only."""

from __future__ import annotations

import io
import json

from adapters import AdapterOptions, LineError, collect
from adapters.json_adapter import JsonAdapter
from engine import record_to_dict


def _read(data: bytes, **options: object) -> list[object]:
    return list(JsonAdapter().read(io.BytesIO(data), AdapterOptions(**options)))  # type: ignore[arg-type]


RECORDS = [{"board": "DB1", "circuit": "1", "zs_ohm": 0.82, "ir_le_mohm": ">999"},
           {"board": "DB1", "circuit": "2", "r1_r2_ohm": "410 mΩ", "polarity_ok": True}]
EXPECTED = [{"board": "DB1", "circuit": "1", "zs_ohm": 0.82, "ir_le_mohm": ">999"},
            {"board": "DB1", "circuit": "2", "r1_r2_ohm": 0.41, "polarity_ok": True}]


def test_three_shapes_same_records() -> None:
    """A list, an object with 'circuits' and NDJSON of the same records give the same records."""
    shapes = [json.dumps(RECORDS), json.dumps({"ruleset": "iec-60364", "circuits": RECORDS}, indent=2),
              "\n".join(json.dumps(r) for r in RECORDS)]
    for text in shapes:
        got = collect(_read(text.encode()))
        assert got.errors == []
        assert [record_to_dict(r) for r in got.records] == EXPECTED


def test_bad_records_have_line_and_pointer() -> None:
    """A broken record, a non-object and a bad field are errors with line and pointer; good ones are kept."""
    text = ('{"circuits": [\n{"board": "DB1", "circuit": "1"},\n{"board": "DB1" "circuit": "2"},\n'
            '7,\n{"board": "DB1", "circuit": "4", "zs_ohm": "2 kA", "ze_ohm": 0.2},\n'
            '{"board": "DB1", "circuit": "5"}\n]}')
    results = _read(text.encode())
    errors = [(e.line, e.code, e.pointer) for e in results if isinstance(e, LineError)]
    assert errors == [(3, "bad_json", "/circuits/1"), (4, "bad_record", "/circuits/2"),
                      (5, "bad_value", "/circuits/3/zs_ohm")]
    assert [r.circuit for r in collect(results).records] == ["1", "4", "5"]


def test_ndjson_bad_line_resumes() -> None:
    """In NDJSON a line that does not parse costs that line; the next line is read."""
    data = b'{"board":"DB1","circuit":"1"}\n{"board":\n{"board":"DB1","circuit":"3"}\n'
    results = _read(data)
    assert [(e.line, e.code) for e in results if isinstance(e, LineError)] == [(2, "bad_json")]
    assert [r.circuit for r in collect(results).records] == ["1", "3"]


def test_large_list_streams_across_chunks() -> None:
    """A list longer than the read chunk is read record by record, with line numbers kept."""
    recs = [{"board": "DB1", "circuit": str(n), "zs_ohm": round(0.01 * n, 2)} for n in range(3000)]
    text = "[\n" + ",\n".join(json.dumps(r) for r in recs) + "\n]"
    results = _read(text.encode())
    got = collect(results)
    assert len(got.records) == 3000 and got.errors == []
    assert results[-1].line == 3001  # type: ignore[attr-defined]


def test_not_json_at_all() -> None:
    """Text that is no JSON document is one error, never an exception."""
    results = _read(b"hello")
    assert [e.code for e in results if isinstance(e, LineError)] == ["bad_document"]
