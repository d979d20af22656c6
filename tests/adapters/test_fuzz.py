"""No byte sequence makes an adapter raise, and every input line is accounted for exactly once."""

from __future__ import annotations

import io
from collections import Counter
from pathlib import Path

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from adapters import AdapterOptions, BoardFacts, Fragment, InputWarning, InstallationFacts, LineError, Skipped
from adapters.csv_adapter import CsvAdapter
from adapters.encoding import sniff_unicode
from adapters.json_adapter import JsonAdapter
from adapters.line_format import append_checksum
from adapters.lines_adapter import LinesAdapter

DATA = Path(__file__).parent / "data"
SEEDS = [p.read_bytes() for p in sorted(DATA.glob("*.csv"))] + [
    "board=DB1\ncircuit=1 zs=0.82Ω r1+r2=0.41\r\n".encode() + append_checksum("circuit=2 zs=1.1").encode(),
    b'[{"board":"DB1","circuit":"1","zs_ohm":0.8},{"board":"DB1","circuit":"2"}]',
    b"DB,Cct,Zs (\xce\xa9),IR L-E [M\xce\xa9]\nDB1,1,0.8,>999\nDB1,2,\"0.9\",200\n",
    # installation and board facts, trade notation and cell words
    b'installation earthing="TN-C-S (PME)" ze=0.21 pfc=1.9kA\nboard=DB2 zdb=0.41 fed_from=DB1/5\n'
    b"circuit=1 device=B32 cable=2.5/1.5 zs=N/A rcd=LIM\nboard=DB2 zs=0.3 pfc=LIM\n",
    b'{"installation": {"earthing": "TT"}, "boards": [{"board": "DB2", "zdb_ohm": 0.41}],'
    b' "circuits": [{"board": "DB2", "circuit": "1", "device": "B32"}]}\n{"boards": [{"board": "DB3"}]}\n',
    b"DB,Fed from,Zdb,PFC at board,Location\nDB1,,0.21,1.9,Hall\nDB2,DB1/5,0.41,N/A,Garage\n",
]
FAST = settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])


@st.composite
def mutated(draw: st.DrawFn) -> bytes:
    """A valid input with bytes replaced, inserted and deleted at random places."""
    data = bytearray(draw(st.sampled_from(SEEDS)))
    for _ in range(draw(st.integers(min_value=1, max_value=8))):
        pos = draw(st.integers(min_value=0, max_value=len(data)))
        action = draw(st.sampled_from(["replace", "insert", "delete"]))
        byte = draw(st.integers(min_value=0, max_value=255))
        if action == "insert" or pos == len(data):
            data.insert(pos, byte)
        elif action == "replace":
            data[pos] = byte
        else:
            del data[pos]
    return bytes(data)


inputs = st.one_of(st.binary(max_size=400), mutated())


def _check_accounting(data: bytes, results: list[object]) -> None:
    """A line is one fragment or facts (a board's, the installation's), one error-only line or one skip."""
    fragments = Counter(r.line for r in results if isinstance(r, Fragment | BoardFacts | InstallationFacts))
    skipped = Counter(r.line for r in results if isinstance(r, Skipped))
    errors = {r.line for r in results if isinstance(r, LineError)}
    assert all(n == 1 for n in fragments.values()), "a line gave two fragments"
    assert all(n == 1 for n in skipped.values()), "a line was skipped twice"
    assert not set(fragments) & set(skipped), "a line is both a fragment and skipped"
    assert not errors & set(skipped), "a skipped line also has an error"
    assert set(fragments) | set(skipped) | errors == set(range(1, len(data.splitlines()) + 1))
    warned = {r.line for r in results if isinstance(r, InputWarning)}
    assert warned <= set(fragments) | set(skipped) | errors, "a warning names a line not accounted for"


def _byte_lines(data: bytes) -> bool:
    """UTF-16 input (marked, or found by its zero bytes) is split as text, not as byte lines."""
    found = sniff_unicode(data[:65536])
    return not (found or "").startswith("utf-16")


@FAST
@given(inputs)
def test_csv_never_raises_and_accounts_for_every_line(data: bytes) -> None:
    """The csv adapter takes any bytes; each line is one fragment, one error-only line or one skip."""
    results = list(CsvAdapter().read(io.BytesIO(data), AdapterOptions(max_line_length=256)))
    if _byte_lines(data):
        _check_accounting(data, results)


@FAST
@given(inputs)
def test_lines_never_raises_and_accounts_for_every_line(data: bytes) -> None:
    """The lines adapter takes any bytes; each line is one fragment, one error-only line or one skip."""
    results = list(LinesAdapter().read(io.BytesIO(data), AdapterOptions(max_line_length=256)))
    if _byte_lines(data):
        _check_accounting(data, results)


@FAST
@given(inputs)
def test_regex_profile_never_raises(data: bytes) -> None:
    """A regex line profile takes any bytes, accounting for every line."""
    options = AdapterOptions(profile="example-logger-regex", max_line_length=256)
    results = list(LinesAdapter().read(io.BytesIO(data), options))
    if _byte_lines(data):
        _check_accounting(data, results)


@FAST
@given(inputs)
def test_json_never_raises(data: bytes) -> None:
    """The json adapter takes any bytes and yields only results (records are its unit, not lines)."""
    results = list(JsonAdapter().read(io.BytesIO(data), AdapterOptions(max_line_length=256)))
    assert all(isinstance(r, Fragment | BoardFacts | InstallationFacts | LineError | Skipped | InputWarning)
               for r in results)
    assert all(1 <= r.line <= data.count(b"\n") + data.count(b"\r") + 1 for r in results)  # type: ignore[union-attr]
