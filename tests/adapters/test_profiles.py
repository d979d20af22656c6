"""Mapping profiles: the built-in invented layouts, users' profiles, validation errors."""

from __future__ import annotations

import io
import json
import re
import tempfile
from pathlib import Path

import pytest

from adapters import AdapterError, AdapterOptions, collect
from adapters.csv_adapter import CsvAdapter
from adapters.lines_adapter import LinesAdapter
from adapters.profile_schema import parse_profile
from adapters.profiles import get_profile, list_profiles
from engine import record_to_dict

DATA = Path(__file__).parent / "data"
LAYOUTS = ["example-comma-units-in-header", "example-semicolon-decimal-comma", "example-long-tab"]


def _records(name: str, profile_dir: str | None = None) -> list[dict[str, object]]:
    with (DATA / f"{name}.csv").open("rb") as stream:
        got = collect(CsvAdapter().read(stream, AdapterOptions(profile=name, profile_dir=profile_dir)))
    assert got.errors == []
    return [record_to_dict(r) for r in got.records]


def test_three_layouts_give_identical_records() -> None:
    """Three invented meter layouts (comma/units in header, semicolon/decimal comma/cp1252/units in
    cells, tab/long) of the same readings map to identical records."""
    first, *others = (_records(name) for name in LAYOUTS)
    assert len(first) == 4
    assert all(other == first for other in others)
    # the conversions behind the equality: 820 mOhm = 0.82 Ω, 2500 kOhm = 2.5 MΩ, 0,0246 s = 24.6 ms
    assert first[0]["zs_ohm"] == 0.82 and first[2]["ir_le_mohm"] == 2.5 and first[1]["rcd_trip_ms"] == 24.6


def test_layouts_differ_as_claimed() -> None:
    """The three example profiles really are different layouts (so the equality above means something)."""
    profiles = {p["name"]: p for p in list_profiles() if p["name"] in LAYOUTS}
    assert {p["layout"] for p in profiles.values()} == {"wide", "long"}
    raw = {name: (DATA / f"{name}.csv").read_bytes() for name in LAYOUTS}
    assert b";" in raw[LAYOUTS[1]] and b"\t" in raw[LAYOUTS[2]] and b"0,41" in raw[LAYOUTS[1]]
    with pytest.raises(UnicodeDecodeError):
        raw[LAYOUTS[1]].decode("utf-8")


def test_regex_line_profile() -> None:
    """A regex line profile maps named groups to fields with per-group units (mΩ → Ω)."""
    lines = b"DB1.1 LP:820 CT:410 IR:>999 T:18\nDB1.2 LP:1350 CT:770\nnot a logger line\n"
    results = list(LinesAdapter().read(__import__("io").BytesIO(lines),
                                       AdapterOptions(profile="example-logger-regex")))
    got = collect(results)
    assert [(e.line, e.code) for e in got.errors] == [(3, "no_match")]
    first, second = (record_to_dict(r) for r in got.records)
    assert first == {"board": "DB1", "circuit": "1", "zs_ohm": 0.82, "r1_r2_ohm": 0.41,
                     "ir_le_mohm": ">999", "rcd_trip_ms": 18.0}
    assert second["zs_ohm"] == 1.35 and "rcd_trip_ms" not in second


def test_user_profile_dir(tmp_path: Path) -> None:
    """A profile in the user's directory is found by name and listed with origin 'user'."""
    doc = {"name": "site-sheet", "layout": "wide", "delimiter": ",",
           "columns": {"Where": "board", "Which": "circuit", "Loop": {"field": "zs_ohm", "unit": "mΩ"}}}
    (tmp_path / "site.json").write_text(json.dumps(doc), encoding="utf-8")
    listed = {p["name"]: p for p in list_profiles(str(tmp_path))}
    assert listed["site-sheet"]["origin"] == "user"
    data = b"Where,Which,Loop\nDB9,4,450\n"
    got = collect(CsvAdapter().read(__import__("io").BytesIO(data),
                                    AdapterOptions(profile="site-sheet", profile_dir=str(tmp_path))))
    assert record_to_dict(got.records[0]) == {"board": "DB9", "circuit": "4", "zs_ohm": 0.45}


def test_env_profile_dir(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    """OHMTALLY_PROFILE_DIR is read when no profile_dir is given."""
    (tmp_path / "p.json").write_text(json.dumps({"name": "from-env", "columns": {}}), encoding="utf-8")
    monkeypatch.setenv("OHMTALLY_PROFILE_DIR", str(tmp_path))
    assert get_profile("from-env", kind="csv").name == "from-env"


def test_unknown_profile_lists_choices() -> None:
    """An unknown profile is AdapterError unknown_profile with the choices of that kind."""
    with pytest.raises(AdapterError) as info:
        list(CsvAdapter().read(__import__("io").BytesIO(b""), AdapterOptions(profile="nope")))
    assert info.value.code == "unknown_profile"
    assert set(LAYOUTS) <= set(info.value.details["choices"])
    assert "example-logger-regex" not in info.value.details["choices"]


@pytest.mark.parametrize(
    ("doc", "pointer"),
    [
        ({"columns": {}}, "/name"),
        ({"name": "x", "delimeter": ";"}, "/delimeter"),
        ({"name": "x", "layout": "diagonal"}, "/layout"),
        ({"name": "x", "columns": {"Loop": "zs"}}, "/columns/Loop/field"),
        ({"name": "x", "columns": {"Loop": {"field": "zs_ohm", "unit": "kA"}}}, "/columns/Loop/unit"),
        ({"name": "x", "columns": {"Loop": {"field": "zs_ohm", "unit": "furlongs"}}}, "/columns/Loop/unit"),
        ({"name": "x", "columns": {"a/b": {"field": "zs_ohm", "scale": -1}}}, "/columns/a~1b/scale"),
        ({"name": "x", "encoding": "klingon-8"}, "/encoding"),
        ({"name": "x", "decimal": ",", "delimiter": ","}, "/decimal"),
        ({"name": "x", "kind": "regex", "pattern": "(?P<circuit>"}, "/pattern"),
        ({"name": "x", "kind": "regex", "pattern": "(?P<wibble>\\d+)(?P<circuit>\\w)"}, "/pattern"),
        ({"name": "x", "kind": "regex", "pattern": "(?P<zs_ohm>\\d+)"}, "/pattern"),
        ({"name": "x", "defaults": {"colour": "red"}}, "/defaults/colour"),
    ],
)
def test_bad_profiles_point_at_the_problem(tmp_path: Path, doc: dict[str, object], pointer: str) -> None:
    """An invalid profile is AdapterError bad_profile with a JSON Pointer to the bad member."""
    (tmp_path / "bad.json").write_text(json.dumps(doc), encoding="utf-8")
    with pytest.raises(AdapterError) as info:
        list_profiles(str(tmp_path))
    assert info.value.code == "bad_profile"
    assert info.value.details["pointer"] == pointer


def test_profile_not_json(tmp_path: Path) -> None:
    """A profile file that is not JSON is bad_profile, naming the file."""
    (tmp_path / "broken.json").write_text("{nope", encoding="utf-8")
    with pytest.raises(AdapterError) as info:
        list_profiles(str(tmp_path))
    assert info.value.code == "bad_profile" and "broken.json" in info.value.details["file"]


def test_lines_profile_example_in_the_adapters_readme_loads_and_reads() -> None:
    """The 'lines' profile shown in adapters/README.md is a valid profile and reads its logger's keys
    (so the documentation is right)."""
    readme = (Path(__file__).parents[2] / "adapters" / "README.md").read_text(encoding="utf-8")
    block = re.search(r"```json\n(\{\"name\": \"bench-lines\".*?)\n```", readme, re.S)
    assert block is not None
    doc = json.loads(block.group(1))
    assert parse_profile(doc)["kind"] == "lines"
    with tempfile.TemporaryDirectory() as tmp:
        (Path(tmp) / "bench.json").write_text(json.dumps(doc), encoding="utf-8")
        data = "circuit=3 Schleife=0,61 Durchgang=410\n".encode("cp1252")
        got = collect(LinesAdapter().read(io.BytesIO(data), AdapterOptions(profile="bench-lines",
                                                                             profile_dir=tmp)))
    assert got.errors == [] and got.warnings == []
    (rec,) = got.records
    assert (rec.board, rec.zs_ohm.value if rec.zs_ohm else None) == ("DB1", 0.61)
    assert rec.r1_r2_ohm is not None and rec.r1_r2_ohm.value == 0.41
