"""The ``lines`` adapter: text lines from a serial port or logger → record fragments.

Invariants (beyond those of :mod:`adapters.base`):
- Lines end at CR, LF or CRLF. In an ASCII-compatible encoding they are split
  on bytes before anything else, so every fault — a bad checksum, a byte that
  does not decode, a stray control byte, a line too long, a syntax error —
  costs that one line only. UTF-16 (either byte order, found by its byte-order
  mark or by the zero bytes of ASCII text) is decoded first and split as
  text; a line's checksum is then taken over its bytes in that encoding.
- The encoding is the caller's (``options.encoding``), else the profile's,
  else what the first 64 KiB show: a UTF-8 or UTF-16 byte-order mark, UTF-16
  zero bytes, else UTF-8. Never a guessed single-byte encoding: a logger that
  writes cp1252 declares it, and a byte that is not UTF-8 is an error for its
  line (so undecodable bytes never become a board or circuit name).
- Decimal commas: ``options.decimal_comma``, else the profile's ``decimal``,
  else points; a ``#% decimal=comma`` line changes it for the lines after it.
- Per-line parsing and the sticky context are :class:`adapters.line_reader.LineReader`'s.
"""

from __future__ import annotations

import codecs
from collections.abc import Iterator
from typing import IO, ClassVar

from .base import AdapterOptions, LineError, Result
from .encoding import checked_encoding, iter_decoded_lines, read_sample, sniff_unicode
from .line_profiles import compile_line_profile
from .line_reader import LineReader
from .line_split import iter_split_lines
from .profiles import LinesProfile, Profile, RegexProfile, get_profile

__all__ = ["LinesAdapter", "reader_for"]


def reader_for(profile: Profile | None, decimal_comma: bool | None) -> LineReader:
    """A :class:`LineReader` set up as the adapter sets it up for ``profile`` and the decimal option."""
    comma = bool(decimal_comma if decimal_comma is not None
                 else profile is not None and profile.decimal == ",")
    if isinstance(profile, RegexProfile):
        return LineReader(decimal_comma=comma, compiled=compile_line_profile(profile),
                          comment=profile.comment, defaults=dict(profile.defaults))
    if isinstance(profile, LinesProfile):
        return LineReader(decimal_comma=comma, comment=profile.comment, defaults=dict(profile.defaults),
                          keys=profile.keys)
    return LineReader(decimal_comma=comma)


class LinesAdapter:
    name: ClassVar[str] = "lines"
    description: ClassVar[str] = ("Text lines from a serial port or logger: ohmtally's key=value line "
                                  "format (circuit readings, board and installation facts) with optional "
                                  "CRC-16 checksum, or regex line profiles")
    media_types: ClassVar[tuple[str, ...]] = ("text/plain",)
    extensions: ClassVar[tuple[str, ...]] = (".txt", ".log")

    def read(self, stream: IO[bytes], options: AdapterOptions) -> Iterator[Result]:
        profile: Profile | None = None
        if options.profile:
            profile = get_profile(options.profile, kind=("regex", "lines"), profile_dir=options.profile_dir)
        declared = checked_encoding(options.encoding) or (profile.encoding if profile else None)
        reader = reader_for(profile, options.decimal_comma)
        sample, replay = read_sample(stream)
        encoding = declared or sniff_unicode(sample) or "utf-8"
        if codecs.lookup(encoding).name.startswith("utf-16"):
            # the checksum covers a line's bytes as sent: in the byte order they came in
            order = codecs.lookup(encoding).name
            if order == "utf-16":  # declared without an order: the byte-order mark says, else LE
                order = "utf-16-be" if sample.startswith(codecs.BOM_UTF16_BE) else "utf-16-le"
            yield from self._text_lines(replay, order, reader, options)
            return
        del sample
        number = 0
        for split in iter_split_lines(replay, options.max_line_length):
            number += 1
            raw = split.data
            if number == 1 and raw.startswith(codecs.BOM_UTF8):
                raw = raw[len(codecs.BOM_UTF8):]
                encoding = "utf-8" if encoding == "utf-8-sig" else encoding
            if split.overlong:
                yield LineError(line=number, code="line_too_long",
                                reason=f"line {number} is longer than {options.max_line_length} bytes")
                continue
            yield from reader.line(number, raw, "utf-8" if encoding == "utf-8-sig" else encoding)

    def _text_lines(self, stream: IO[bytes], encoding: str, reader: LineReader,
                    options: AdapterOptions) -> Iterator[Result]:
        for line, overlong in iter_decoded_lines(stream, encoding, options.max_line_length):
            if overlong:
                yield LineError(line=line.number, code="line_too_long",
                                reason=f"line {line.number} is longer than {options.max_line_length} "
                                       "characters")
            elif line.problem:
                yield LineError(line=line.number, code=line.code or "bad_encoding", reason=line.problem)
            else:
                yield from reader.decoded_line(line.number, line.text, encoding)
