"""``ohmtally capture --port URL --job ID --api URL``: serial port → local spool → API.

Also ``--list-ports`` (what serial ports this machine has), ``--show`` (what a
spool holds) and ``--replay`` (re-send a spool's rejected and unsent lines).
The API key comes from ``OHMTALLY_API_KEY`` or ``--key-file PATH``, never from
the command line, where other users of the machine could read it.

Exit status: 0 everything sent and taken; 1 a circuit failed; 2 lines were
rejected or remain unsent (they are in the spool: ``--show``); 3 usage.
"""

from __future__ import annotations

import argparse
import json
import os
import re
import sys
from pathlib import Path
from typing import Any

from serial.tools import list_ports  # type: ignore[import-untyped]

from api.capture.inspect import show_spool
from api.capture.runner import run_session
from api.capture.spool import Spool, SpoolError
from api.cli import EXIT_OK, EXIT_USAGE

try:  # optional: the per-platform data folder; without it, the XDG default
    import platformdirs
except ImportError:  # pragma: no cover - depends on what is installed
    platformdirs = None  # type: ignore[assignment]

__all__ = ["default_spool_path", "read_api_key", "register", "run"]


def register(sub: Any) -> None:
    # allow_abbrev off: "--key SECRET" must be an error, not an abbreviation of --key-file.
    p = sub.add_parser("capture", allow_abbrev=False,
                       help="read a meter's serial port and forward readings to a job",
                       description="Read lines from a serial port (or socket://, rfc2217:// URL), "
                       "keep each one in a local spool, and forward them to a job on the API.")
    p.add_argument("--port", help="device path (/dev/ttyUSB0, COM3) or pyserial URL (socket://host:port)")
    p.add_argument("--job", help="job id on the API")
    p.add_argument("--api", help="API base URL, e.g. http://127.0.0.1:8000")
    p.add_argument("--key-file", type=Path, help="file holding the API key (else $OHMTALLY_API_KEY)")
    p.add_argument("--profile", help="regex line profile for the lines adapter (sent as ?profile=)")
    p.add_argument("--baud", type=int, default=9600, help="baud rate (default 9600)")
    p.add_argument("--spool", type=Path, help="spool file (default: per-user data dir, spool-<job>.sqlite)")
    p.add_argument("--batch-lines", type=int, default=50, help="most lines per POST (default 50)")
    p.add_argument("--linger", type=float, default=0.5, help="seconds a line waits for others (default 0.5)")
    p.add_argument("--drain", type=float, default=10.0,
                   help="after Ctrl-C, send until this many seconds pass without progress (default 10)")
    mode = p.add_mutually_exclusive_group()
    mode.add_argument("--quiet", action="store_true", help="no status line; findings and faults only")
    mode.add_argument("--json-log", action="store_true", help="one JSON object per event on stdout")
    action = p.add_mutually_exclusive_group()
    action.add_argument("--list-ports", action="store_true", help="list serial ports and exit")
    action.add_argument("--show", action="store_true", help="show what the spool holds and exit")
    action.add_argument("--replay", action="store_true",
                        help="re-send the spool's rejected and unsent lines, then exit")
    p.set_defaults(func=run)


def default_spool_path(job: str) -> Path:
    """``<user data dir>/ohmtally/spool-<job>.sqlite`` (platformdirs where installed, else XDG)."""
    if platformdirs is not None:
        base = Path(platformdirs.user_data_dir("ohmtally", appauthor=False))
    else:
        base = Path(os.environ.get("XDG_DATA_HOME") or Path.home() / ".local" / "share") / "ohmtally"
    safe = re.sub(r"[^A-Za-z0-9._-]", "_", job)
    return base / f"spool-{safe}.sqlite"


def read_api_key(key_file: Path | None) -> str | None:
    """The key from ``--key-file`` (first line) or ``OHMTALLY_API_KEY``; None when neither is set."""
    if key_file is not None:
        text = key_file.read_text(encoding="utf-8").strip()
        return text.splitlines()[0].strip() if text else None
    return os.environ.get("OHMTALLY_API_KEY") or None


def _usage(message: str) -> int:
    print(f"ohmtally capture: error: {message}", file=sys.stderr)
    return EXIT_USAGE


def run(args: argparse.Namespace) -> int:
    if args.list_ports:
        return _list_ports(args.json_log)
    if args.spool is None and not args.job:
        return _usage("give --job (or --spool PATH)")
    spool_path: Path = args.spool or default_spool_path(args.job)
    if args.show:
        try:
            spool = Spool(spool_path, read_only=True)
        except SpoolError as exc:
            return _usage(str(exc))
        show_spool(spool, as_json=args.json_log)
        return EXIT_OK
    return _capture(args, spool_path)


def _capture(args: argparse.Namespace, spool_path: Path) -> int:
    if args.batch_lines < 1 or args.linger < 0 or args.drain < 0:
        return _usage("--batch-lines must be ≥ 1, --linger and --drain ≥ 0")
    existing = Spool(spool_path, read_only=True).meta() if spool_path.exists() else {}
    job = args.job or existing.get("job")
    api = args.api or existing.get("api")
    if not job or not api:
        return _usage("give --job and --api (or --replay a spool that names them)")
    if not args.replay and not args.port:
        return _usage("give --port (a device path or a socket:// / rfc2217:// URL)")
    try:
        api_key = read_api_key(args.key_file)
    except OSError as exc:
        return _usage(f"cannot read --key-file: {exc}")
    try:
        spool = Spool(spool_path, job=job, api=api)
    except SpoolError as exc:
        return _usage(f"{exc}; give another --spool for this job")
    return run_session(spool=spool, job=job, api=api, api_key=api_key, port=args.port,
                       baud=args.baud, profile=args.profile, batch_lines=args.batch_lines,
                       linger_s=args.linger, drain_s=args.drain, replay=args.replay,
                       mode="json" if args.json_log else "quiet" if args.quiet else "live")


def _list_ports(as_json: bool) -> int:
    ports = [{"device": p.device, "description": p.description, "hwid": p.hwid}
             for p in sorted(list_ports.comports(), key=lambda p: p.device)]
    if as_json:
        print(json.dumps(ports))
    elif not ports:
        print("no serial ports found (a USB adapter may need its driver, or your user the dialout group)")
    else:
        for port in ports:
            print(f"{port['device']}\t{port['description']}\t{port['hwid']}")
    return EXIT_OK
