"""``ohmtally demo``: the demo site into a running server, in one command.

Steps: migrate the SQLite database in the instance folder; start ``ohmtally
serve`` as a child process on 127.0.0.1 (a free port unless ``--port``), with
``OHMTALLY_AUTH=off`` (allowed on loopback only); create the manifest's previous
visit's job and post its files, if it has one; create the manifest's job;
post its files; print the verdicts a person can read and what changed since the
previous visit (``GET /v1/jobs/<id>/changes``); leave the server
running with its URL printed until Ctrl-C, SIGTERM or SIGHUP (``--no-wait``: stop
and exit). However the demo ends, short of SIGKILL, its server is stopped with it.
"""

from __future__ import annotations

import argparse
import os
import signal
import socket
import subprocess
import sys
import time
from pathlib import Path
from typing import Any

import httpx

from api.app import default_instance_path
from api.cli import EXIT_BAD_INPUT, EXIT_OK, EXIT_USAGE
from api.cli.db import resolve_database_url
from api.cli.demo_manifest import DEFAULT_MANIFEST, ManifestError, load_manifest
from api.db.schema import upgrade
from api.db.session import default_sqlite_url
from api.render._text import meter_pair
from api.settings import load_settings
from engine.words import word_for

__all__ = ["format_changes", "format_report", "free_port", "register", "run", "wait_healthy"]


def register(sub: Any) -> None:
    p = sub.add_parser("demo", help="start a local server and post the demo site to it")
    p.add_argument("--port", type=int, default=0, help="port on 127.0.0.1 (default: a free one)")
    p.add_argument("--manifest", type=Path, default=None,
                   help="demo manifest (default: examples/demo/manifest.json)")
    p.add_argument("--database-url", default=None,
                   help="database (default: the SQLite file in the instance folder)")
    p.add_argument("--no-wait", action="store_true", help="stop the server and exit after printing")
    p.set_defaults(func=run)


def free_port() -> int:
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as probe:
        probe.bind(("127.0.0.1", 0))
        port: int = probe.getsockname()[1]
        return port


def wait_healthy(base: str, child: subprocess.Popen[bytes], timeout: float = 30.0) -> bool:
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        if child.poll() is not None:
            return False
        try:
            if httpx.get(f"{base}/v1/health", timeout=1.0).status_code == 200:
                return True
        except httpx.HTTPError:
            pass
        time.sleep(0.1)
    return False


def start_server(port: int, database_url: str) -> subprocess.Popen[bytes]:
    env = {**os.environ, "OHMTALLY_AUTH": "off", "OHMTALLY_DATABASE_URL": database_url,
           "OHMTALLY_LOG_LEVEL": os.environ.get("OHMTALLY_LOG_LEVEL", "WARNING")}
    command = [sys.executable, "-c", "from api.cli import main; raise SystemExit(main())",
               "serve", "--bind", f"127.0.0.1:{port}", "--workers", "1"]
    return subprocess.Popen(command, env=env)


def _check_line(check: dict[str, Any]) -> str:
    value, limit = check.get("value"), check.get("limit")
    figures = ""
    if value is not None:  # figures as a meter shows them (api.render), value and limit never equal-looking
        shown, bound = meter_pair(value, limit)
        rel = "" if check.get("relation", "=") == "=" else check["relation"]
        unit = f" {check['unit']}" if check.get("unit") else ""
        figures = f" ({rel}{shown}{unit}"
        figures += f", limit {bound}{unit})" if limit is not None else ")"
    return f"      {check['outcome'].upper():<11} {check['check']}{figures}: {check['detail']}"


def format_report(job: dict[str, Any], posts: list[tuple[str, int, dict[str, Any]]],
                  verdicts: dict[str, Any]) -> str:
    """The job, what each upload gave, and per board/circuit the outcome with its findings."""
    lines = [f"job {job['id']}: {job['reference']} — {job['site']}",
             f"ruleset: {verdicts['ruleset']['id']} — {verdicts['ruleset']['title']}", ""]
    for name, status, body in posts:
        if status == 200:
            lines.append(f"posted {name}: {body['accepted']} value(s) merged, "
                         f"{len(body['rejected'])} rejected (upload {body['upload']['id']})")
            for bad in body["rejected"]:
                where = f"line {bad['line']}" if "line" in bad else bad.get("pointer", "")
                lines.append(f"    rejected {where}: {bad['reason']}")
        else:
            lines.append(f"posted {name}: HTTP {status} {body.get('code')}: {body.get('detail')}")
    lines.append("")
    board = None
    for verdict in verdicts["verdicts"]:
        if verdict["board"] != board:
            board = verdict["board"]
            lines.append(f"board {board}")
        lines.append(f"  circuit {verdict['circuit']:<6} {verdict['outcome'].upper()}")
        for check in verdict["checks"]:
            if check["outcome"] in ("fail", "investigate"):
                lines.append(_check_line(check))
        wanting = sorted({c["check"] for c in verdict["checks"] if c["outcome"] == "incomplete"})
        if wanting:
            lines.append(f"      {'INCOMPLETE':<11} not enough data for: {', '.join(wanting)}")
    summary = verdicts["summary"]
    lines += ["", "summary: " + ", ".join(f"{k} {v}" for k, v in summary.items()), "",
              "CAUTION: " + verdicts["notice"]]
    return "\n".join(lines) + "\n"


def _shown(value: dict[str, Any]) -> str:
    rel = "" if value.get("relation") in (None, "=") else f"{value['relation']} "
    figure = "OL" if value.get("value") is None else meter_pair(value["value"], None)[0]
    unit = f" {value['unit']}" if value.get("unit") else ""
    return f"{rel}{figure}{unit}"


def format_changes(changes: dict[str, Any]) -> str:
    """What changed since the previous visit: the changes that need a look, circuits appeared and gone."""
    previous = changes.get("previous")
    if previous is None:
        return "no previous visit of this installation: nothing to compare\n"
    lines = [f"since the previous visit (job {previous['job']}, readings of {previous['date']}):"]
    within = 0
    for circuit in changes["circuits"]:
        looks = [c for c in circuit["changes"] if c["needs_look"] is not False]
        within += len(circuit["changes"]) - len(looks)
        if looks:
            said = "; ".join(f"{word_for(c['field'])} {_shown(c['previous'])} → {_shown(c['current'])}"
                             for c in looks)
            lines.append(f"  {circuit['board']}/{circuit['circuit']:<6} NEEDS A LOOK: {said}")
    for row in changes["supply"]:
        mark = "NEEDS A LOOK" if row["needs_look"] is not False else "within the thresholds"
        lines.append(f"  {row['where']} {word_for(row['field'])} {_shown(row['previous'])} → "
                     f"{_shown(row['current'])}: "
                     f"{mark}")
    lines.append(f"  {within} other reading(s) changed within the thresholds")
    for what in ("appeared", "gone"):
        if changes[what]:
            lines.append(f"  {what}: " + ", ".join(f"{c['board']}/{c['circuit']}" for c in changes[what]))
    return "\n".join(lines) + "\n"


def _post_visit(client: httpx.Client, job_fields: dict[str, Any], uploads: Any, prefix: str = ""
                ) -> tuple[dict[str, Any], list[tuple[str, int, dict[str, Any]]]]:
    created = client.post("/v1/jobs", json=job_fields)
    created.raise_for_status()
    job: dict[str, Any] = created.json()
    posts = []
    for spec in uploads:
        response = client.post(f"/v1/jobs/{job['id']}/readings", content=spec.path.read_bytes(),
                               headers={"Content-Type": spec.content_type}, params=spec.params())
        posts.append((prefix + spec.path.name, response.status_code, response.json()))
    return job, posts


def post_demo(base: str, manifest: Any) -> tuple[dict[str, Any], list[tuple[str, int, dict[str, Any]]],
                                                dict[str, Any]]:
    """The previous visit (if the manifest has one), then the demo job: (job, posts, its verdicts)."""
    with httpx.Client(base_url=base, timeout=30.0) as client:
        posts: list[tuple[str, int, dict[str, Any]]] = []
        job_fields = dict(manifest.job)
        if manifest.previous is not None:
            earlier, posts = _post_visit(client, manifest.previous.job, manifest.previous.uploads,
                                         "previous visit: ")
            # named explicitly: a demo run again on the same database would otherwise find the last
            # run's job of the same installation and date as this visit's previous one
            job_fields["previous_job_id"] = earlier["id"]
        job, own = _post_visit(client, job_fields, manifest.uploads)
        verdicts = client.get(f"/v1/jobs/{job['id']}/verdicts")
        verdicts.raise_for_status()
        return job, posts + own, verdicts.json()


def demo_changes(base: str, job_id: int) -> dict[str, Any]:
    """``GET /v1/jobs/<id>/changes`` of the demo job."""
    with httpx.Client(base_url=base, timeout=30.0) as client:
        answer = client.get(f"/v1/jobs/{job_id}/changes")
        answer.raise_for_status()
        changes: dict[str, Any] = answer.json()
        return changes


def _stop_on_signal(signum: int, _frame: Any) -> None:
    """SIGTERM or SIGHUP end the demo like Ctrl-C does: through ``finally``, which stops the server.

    Without this a SIGTERM (a terminal closed, ``kill``, a supervisor) ended the demo at once
    and left its server running on the port with no parent.
    """
    raise SystemExit(128 + signum)


def run(args: argparse.Namespace) -> int:
    for signum in (signal.SIGTERM, signal.SIGHUP):
        signal.signal(signum, _stop_on_signal)
    try:
        manifest = load_manifest(args.manifest or DEFAULT_MANIFEST)
    except ManifestError as exc:
        print(f"ohmtally demo: {exc}", file=sys.stderr)
        return EXIT_USAGE
    # the demo never writes into a configured production database
    url = args.database_url or default_sqlite_url(load_settings().instance_path or default_instance_path())
    upgrade(resolve_database_url(url))
    port = args.port or free_port()
    base = f"http://127.0.0.1:{port}"
    child = start_server(port, url)
    try:
        if not wait_healthy(base, child):
            print(f"ohmtally demo: the server did not come up on {base}", file=sys.stderr)
            return EXIT_BAD_INPUT
        job, posts, verdicts = post_demo(base, manifest)
        sys.stdout.write(format_report(job, posts, verdicts))
        sys.stdout.write("\n" + format_changes(demo_changes(base, job["id"])))
        print(f"\nAPI running at {base}/v1 — job {job['id']}: {base}/v1/jobs/{job['id']}/verdicts"
              f"\nOpenAPI: {base}/v1/openapi.json"
              "\nThis demo server runs with OHMTALLY_AUTH=off (loopback only). For a server with keys:"
              "\n  ohmtally keys create --org 'My firm' --name 'field logger' --scope read,write"
              "\n  then send: Authorization: Bearer <the printed key>")
        status = EXIT_OK if all(code == 200 for _n, code, _b in posts) else EXIT_BAD_INPUT
        if args.no_wait:
            return status
        print("Ctrl-C stops the server.", flush=True)
        try:
            child.wait()
        except KeyboardInterrupt:
            print("\nstopping the server")
        return status
    finally:
        if child.poll() is None:
            child.terminate()
            try:
                child.wait(timeout=15)
            except subprocess.TimeoutExpired:
                child.kill()
