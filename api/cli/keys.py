"""``ohmtally keys create|list|revoke|reseal``: API keys per organisation, and the server key that
seals webhook secrets, administered on the server host.

Invariants:
- ``create`` prints the secret once, on stdout, and nothing else ever shows
  it again: the database holds only its SHA-256 (``api.http.keys``).
- ``--org`` names an organisation by its slug, or by the exact name it was made
  with; an unknown one is made then, its slug chosen once (``--org-slug``, else
  derived from the name) and printed. A name differing from an existing
  organisation's only in case or punctuation is refused (exit 3), never merged.
- ``list`` never prints a secret or a hash: id, organisation, name, display
  prefix, scopes, created, expires, revoked, last used.
- ``revoke`` takes effect on the next request; revoking twice is not an error.
- ``reseal`` re-encrypts every stored webhook secret with the first key of
  ``OHMTALLY_ENCRYPTION_KEY`` (every key listed still opens them), in one
  transaction: after it, the old server key can be dropped from the setting
  (api/webhooks/README.md, "Rotating the server key").
- The database is ``--database-url`` / ``OHMTALLY_DATABASE_URL`` / the
  instance SQLite file, like ``ohmtally db upgrade``; it must be migrated.
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Iterator
from contextlib import contextmanager
from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session

from api.cli import EXIT_BAD_INPUT, EXIT_OK, EXIT_USAGE
from api.cli.db import resolve_database_url
from api.db.models import ApiKey, Organisation, utcnow
from api.db.schema import SchemaNotCurrent, check_schema
from api.db.session import make_engine
from api.http.keys import KeySpecError, create_key, organisation_named, parse_expiry, parse_scopes
from api.settings import SettingsError, load_settings
from api.webhooks.sealing import load_box
from api.webhooks.secret_store import reseal_all

__all__ = ["register"]


def register(sub: Any) -> None:
    p = sub.add_parser("keys", help="API keys: create, list, revoke")
    inner = p.add_subparsers(dest="keys_command", metavar="ACTION", required=True)
    create = inner.add_parser("create", help="make a key; its secret is shown once")
    create.add_argument("--org", required=True, metavar="ORG",
                        help="organisation: its slug, or a new organisation's name (made then)")
    create.add_argument("--org-slug", default=None, metavar="SLUG",
                        help="a new organisation's slug (a-z, 0-9, '-'; default: from its name), chosen once")
    create.add_argument("--name", required=True, metavar="N",
                        help="what the key is for (e.g. 'van 3 logger')")
    create.add_argument("--scope", default="read", metavar="LIST",
                        help="comma-separated: read, write, admin (default read)")
    create.add_argument("--expires", default=None, metavar="AGE",
                        help="12h, 30d, 2w or never (default never)")
    create.set_defaults(func=_create)
    listing = inner.add_parser("list", help="every key, without secrets")
    listing.add_argument("--org", default=None, metavar="ORG",
                         help="only this organisation's keys (slug or name)")
    listing.set_defaults(func=_list)
    revoke = inner.add_parser("revoke", help="stop a key working")
    revoke.add_argument("id", type=int, metavar="ID")
    revoke.set_defaults(func=_revoke)
    reseal = inner.add_parser("reseal", help="seal every webhook secret again with the first server key "
                              "(the last step of rotating OHMTALLY_ENCRYPTION_KEY)")
    reseal.set_defaults(func=_reseal)
    for action in (create, listing, revoke, reseal):
        action.add_argument("--database-url", help="SQLAlchemy URL (default: OHMTALLY_DATABASE_URL, "
                            "else the SQLite file in the instance folder)")


@contextmanager
def _open(args: argparse.Namespace) -> Iterator[Any]:
    """A session on the migrated database (``None`` after printing why not); the pool closed after."""
    url = resolve_database_url(args.database_url)
    engine = make_engine(url)
    try:
        check_schema(engine, url)
    except SchemaNotCurrent as exc:
        print(f"ohmtally keys: {exc}", file=sys.stderr)
        engine.dispose()
        yield None
        return
    try:
        with Session(engine, expire_on_commit=False) as session:
            yield session
    finally:
        engine.dispose()


def _create(args: argparse.Namespace) -> int:
    try:
        scopes = parse_scopes(args.scope)
        expires_at = parse_expiry(args.expires, utcnow())
    except KeySpecError as exc:
        print(f"ohmtally keys create: {exc}", file=sys.stderr)
        return EXIT_USAGE
    with _open(args) as session:
        if session is None:
            return EXIT_BAD_INPUT
        try:
            known = organisation_named(session, args.org, create=False, slug=args.org_slug)
            org = known or organisation_named(session, args.org, create=True, slug=args.org_slug)
        except KeySpecError as exc:
            print(f"ohmtally keys create: {exc}", file=sys.stderr)
            return EXIT_USAGE
        assert org is not None
        if known is None:
            print(f"organisation {org.slug!r} ({org.name}) made; name it --org {org.slug} from now on",
                  file=sys.stderr)
        made = create_key(session, org, name=args.name, scopes=scopes, expires_at=expires_at)
        session.commit()
        key = made.key
        print(made.secret)
        expiry = key.expires_at.isoformat(timespec="seconds") if key.expires_at else "never"
        print(f"key {key.id} for organisation {org.slug!r} ({key.name}), scopes {key.scopes}, expires "
              f"{expiry}. The secret above is shown only now: store it in the client's secret store. "
              "Use it as: Authorization: Bearer <secret>", file=sys.stderr)
    return EXIT_OK


def _when(value: Any) -> str:
    return value.isoformat(timespec="seconds") if value is not None else "-"


def _list(args: argparse.Namespace) -> int:
    with _open(args) as session:
        if session is None:
            return EXIT_BAD_INPUT
        query = select(ApiKey, Organisation.slug).join(Organisation).order_by(ApiKey.id)
        if args.org:
            query = query.where((Organisation.slug == args.org) | (Organisation.name == args.org.strip()))
        print("id\torganisation\tname\tprefix\tscopes\tcreated\texpires\trevoked\tlast_used")
        for key, slug in session.execute(query):
            print("\t".join([str(key.id), slug, key.name, key.prefix + "…", key.scopes, _when(key.created_at),
                             _when(key.expires_at), _when(key.revoked_at), _when(key.last_used_at)]))
    return EXIT_OK


def _revoke(args: argparse.Namespace) -> int:
    with _open(args) as session:
        if session is None:
            return EXIT_BAD_INPUT
        key = session.get(ApiKey, args.id)
        if key is None:
            print(f"ohmtally keys revoke: there is no key {args.id}", file=sys.stderr)
            return EXIT_BAD_INPUT
        if key.revoked_at is None:
            key.revoked_at = utcnow()
            session.commit()
        print(f"key {key.id} ({key.name}) revoked at {_when(key.revoked_at)}")
    return EXIT_OK


def _reseal(args: argparse.Namespace) -> int:
    try:
        settings = load_settings()
    except SettingsError as exc:
        print(f"ohmtally keys reseal: {exc}", file=sys.stderr)
        return EXIT_USAGE
    if settings.encryption_keys is None:
        print("ohmtally keys reseal: set OHMTALLY_ENCRYPTION_KEY (the new key first, then the old ones)",
              file=sys.stderr)
        return EXIT_USAGE
    box = load_box(settings, settings.instance_path or "")
    assert box is not None  # a key is set, so the box is made from it
    with _open(args) as session:
        if session is None:
            return EXIT_BAD_INPUT
        count = reseal_all(session, box)
        session.commit()
    print(f"{count} webhook secret(s) sealed with the first server key; the others may now be dropped")
    return EXIT_OK
