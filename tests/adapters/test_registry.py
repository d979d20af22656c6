"""Adapter discovery through entry points, group ohmtally.adapters (adapters/README.md)."""

from __future__ import annotations

import io
import sys
import textwrap
from collections.abc import Iterator
from pathlib import Path

import pytest

from adapters import Adapter, AdapterError, AdapterOptions, collect
from adapters.registry import (
    adapter_for_extension,
    adapter_for_media_type,
    get_adapter,
    list_adapters,
)


def test_builtins_listed() -> None:
    """csv, lines and json are listed with their media types, extensions and profiles."""
    listed = {a["name"]: a for a in list_adapters()}
    assert {"csv", "lines", "json"} <= set(listed)
    assert "text/csv" in listed["csv"]["media_types"]
    assert "example-long-tab" in listed["csv"]["profiles"]
    assert listed["lines"]["profiles"] == ["example-lines-decimal-comma", "example-logger-regex"]
    assert all(isinstance(get_adapter(name), Adapter) for name in ("csv", "lines", "json"))


@pytest.mark.parametrize(
    ("suffix", "name"),
    [(".csv", "csv"), (".CSV", "csv"), (".txt", "lines"), (".log", "lines"), (".json", "json"),
     ("json", "json")],
)
def test_adapter_for_extension(suffix: str, name: str) -> None:
    """The CLI's routing by extension: .csv → csv, .txt/.log → lines, .json → json."""
    assert adapter_for_extension(suffix).name == name


@pytest.mark.parametrize(
    ("media_type", "name"),
    [("text/csv", "csv"), ("text/csv; charset=utf-8", "csv"), ("text/plain", "lines"),
     ("application/json", "json"), ("application/x-ndjson", "json")],
)
def test_adapter_for_media_type(media_type: str, name: str) -> None:
    """The API's routing by content type."""
    assert adapter_for_media_type(media_type).name == name


def test_unknown_names() -> None:
    """Unknown adapter names, extensions and media types are unknown_adapter with the choices."""
    for call in (lambda: get_adapter("nope"), lambda: adapter_for_extension(".xlsx"),
                 lambda: adapter_for_media_type("image/png")):
        with pytest.raises(AdapterError) as info:
            call()
        assert info.value.code == "unknown_adapter"
        assert {"csv", "lines", "json"} <= set(info.value.details["choices"])


PLUGIN = '''
from adapters import Fragment, Skipped

class PipeAdapter:
    name = "pipes"
    description = "test plug-in: BOARD|CIRCUIT|ZS"
    media_types = ("text/x-pipes",)
    extensions = (".pipes",)

    def read(self, stream, options):
        for number, raw in enumerate(stream.read().splitlines(), 1):
            board, circuit, zs = raw.decode().split("|")
            yield Fragment(board=board, circuit=circuit, fields={}, line=number)
'''


@pytest.fixture
def plugin_on_path(tmp_path: Path) -> Iterator[Path]:
    """A tiny third-party distribution (module + .dist-info with entry_points.txt) put on sys.path."""
    (tmp_path / "ohmtally_pipes.py").write_text(PLUGIN, encoding="utf-8")
    info = tmp_path / "ohmtally_pipes-1.0.dist-info"
    info.mkdir()
    (info / "METADATA").write_text("Metadata-Version: 2.1\nName: ohmtally-pipes\nVersion: 1.0\n",
                                   encoding="utf-8")
    (info / "entry_points.txt").write_text(textwrap.dedent("""\
        [ohmtally.adapters]
        pipes = ohmtally_pipes:PipeAdapter
        broken = ohmtally_pipes_missing:Nothing
        """), encoding="utf-8")
    sys.path.insert(0, str(tmp_path))
    try:
        yield tmp_path
    finally:
        sys.path.remove(str(tmp_path))
        sys.modules.pop("ohmtally_pipes", None)


def test_third_party_adapter_appears(plugin_on_path: Path) -> None:
    """An adapter installed as its own distribution is found, listed and routed without touching ohmtally;
    a broken one is left out of the list and reported as adapter_failed."""
    names = [a["name"] for a in list_adapters()]
    assert "pipes" in names and "broken" not in names
    adapter = get_adapter("pipes")
    assert adapter_for_extension(".pipes") is adapter
    got = collect(adapter.read(io.BytesIO(b"DB1|1|0.8\nDB1|2|0.9\n"), AdapterOptions()))
    assert [r.circuit for r in got.records] == ["1", "2"]
    with pytest.raises(AdapterError) as info:
        get_adapter("broken")
    assert info.value.code == "adapter_failed"


def test_third_party_gone_when_uninstalled() -> None:
    """Without the plug-in on the path it is not listed (discovery is not stuck on an old answer)."""
    assert "pipes" not in [a["name"] for a in list_adapters()]
