"""The serial reader: a pure line splitter, and complete lines from loop:// and a pseudo-terminal."""

from __future__ import annotations

import os
import random
import threading
import time
from collections.abc import Iterator

import pytest
from hypothesis import given
from hypothesis import strategies as st

from adapters.serial_port import LineEvent, LineSplitter, PortEvent, SerialLineReader


def _split_all(data: bytes, cuts: list[int], max_len: int = 1 << 20) -> list[bytes]:
    splitter = LineSplitter(max_len)
    out: list[bytes] = []
    last = 0
    for cut in [*sorted({c % (len(data) + 1) for c in cuts}), len(data)]:
        out += [line.data for line in splitter.feed(data[last:cut])]
        last = cut
    tail = splitter.flush()
    return out + ([tail.data] if tail is not None else [])


@given(st.binary(max_size=300), st.lists(st.integers(min_value=0, max_value=400), max_size=30))
def test_splitter_matches_splitlines(data: bytes, cuts: list[int]) -> None:
    """Fed at any byte boundaries, the splitter gives exactly bytes.splitlines() (the stdlib's CR/LF/CRLF
    rule), so a CRLF split across two reads is one line ending."""
    assert _split_all(data, cuts) == data.splitlines()


def test_splitter_overlong_line_is_cut_once() -> None:
    """A line beyond max_line_length comes out once, cut and marked; the next line is intact."""
    splitter = LineSplitter(8)
    lines = splitter.feed(b"0123456789abcdef") + splitter.feed(b"ghij\nok\n")
    assert [(x.data, x.overlong) for x in lines] == [(b"01234567", True), (b"ok", False)]


def _noisy_stream(seed: int) -> tuple[bytes, list[bytes]]:
    """Lines in our format mixed with noise lines, random endings; returns (bytes, complete lines)."""
    rng = random.Random(seed)
    lines: list[bytes] = []
    for n in range(60):
        if rng.random() < 0.2:
            noise = [0, 7, 0x11, 0x13, 0xFF, 0x41, 0x20]
            lines.append(bytes(rng.choice(noise) for _ in range(rng.randint(1, 9))))
        else:
            lines.append(f"board=DB1 circuit={n} zs=0.{n:02d}".encode())
    data = b"".join(line + rng.choice([b"\n", b"\r\n", b"\r\n"]) for line in lines)
    return data, lines


def _chunks(data: bytes, seed: int) -> Iterator[bytes]:
    rng = random.Random(seed)
    pos = 0
    while pos < len(data):
        step = rng.randint(1, 23)
        yield data[pos:pos + step]
        pos += step


def _collect(reader: SerialLineReader, want: int, written: threading.Event, deadline: float
             ) -> tuple[list[bytes], list[PortEvent]]:
    lines: list[bytes] = []
    events: list[PortEvent] = []
    for event in reader.lines():
        if isinstance(event, LineEvent):
            lines.append(event.data)
        elif event.kind != "idle":
            events.append(event)
        if (len(lines) >= want and written.is_set()) or time.monotonic() > deadline:
            reader.close()
    return lines, events


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_loop_port_yields_exactly_the_complete_lines(seed: int) -> None:
    """Through loop://, lines cut at arbitrary byte boundaries with noise come out exactly, in order;
    an unterminated tail is not a line."""
    data, expected = _noisy_stream(seed)
    reader = SerialLineReader("loop://", timeout=0.02, idle_events=True)
    port = reader.port

    written = threading.Event()

    def feed() -> None:
        for chunk in _chunks(data + b"partial-no-end", seed):
            port.write(chunk)
            time.sleep(0.0005)
        written.set()

    writer = threading.Thread(target=feed)
    writer.start()
    lines, events = _collect(reader, len(expected), written, time.monotonic() + 10)
    writer.join()
    assert lines == expected
    assert events[0].kind == "opened" and events[-1].kind == "closed"
    assert events[-1].dropped == len(b"partial-no-end")


def test_pty_disconnect_is_an_event() -> None:
    """Over a pseudo-terminal pair, complete lines arrive and closing the far end mid-line yields a
    'disconnected' event (with the dropped bytes counted), not an exception."""
    data, expected = _noisy_stream(7)
    master, slave = os.openpty()
    reader = SerialLineReader(os.ttyname(slave), timeout=0.02, idle_events=True)
    assert reader.port.is_open  # opened (pyserial puts the tty in raw mode) before writing
    os.close(slave)
    events: list[LineEvent | PortEvent] = []

    def feed() -> None:
        for chunk in _chunks(data, 7):
            os.write(master, chunk)
            time.sleep(0.0005)
        os.write(master, b"board=DB1 circuit=99 zs=0.")  # cut off by the disconnect
        time.sleep(0.2)
        os.close(master)

    writer = threading.Thread(target=feed)
    writer.start()
    deadline = time.monotonic() + 10
    for event in reader.lines():
        if not (isinstance(event, PortEvent) and event.kind == "idle"):
            events.append(event)
        if time.monotonic() > deadline:
            reader.close()
    writer.join()
    reader.close()
    lines = [e.data for e in events if isinstance(e, LineEvent)]
    assert lines == expected
    last = events[-1]
    assert isinstance(last, PortEvent) and last.kind == "disconnected"
    assert last.dropped == len(b"board=DB1 circuit=99 zs=0.")


def test_unopenable_port_is_an_event() -> None:
    """A port that cannot be opened is an 'error' event, not an exception."""
    events = list(SerialLineReader("/dev/does-not-exist-ohmtally").lines())
    assert [e.kind for e in events if isinstance(e, PortEvent)] == ["error"]
