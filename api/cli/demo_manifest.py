"""The demo's manifest: which job to create and which files to post to it, in order.

``examples/demo/manifest.json``::

    {"job": {"reference": "...", "site": "...", "ruleset": "bs7671-2018-a2",
             "installation_ref": "...", "tested_on": "2026-11-24"},
     "uploads": [{"file": "db1-meter-export.csv", "content_type": "text/csv",
                  "adapter": "csv", "profile": null}, ...],
     "previous": {"job": {...}, "uploads": [...]}}

``previous`` (optional) is an earlier visit of the same installation, posted first into a
job of its own: with the same ``installation_ref`` and an earlier ``tested_on`` it is the
demo job's previous visit (the ``previous_visit`` check, ``GET /v1/jobs/<id>/changes``).

File paths are relative to the manifest's folder. A bad manifest raises
:class:`ManifestError` naming the JSON pointer of the bad member; files are
checked to exist before anything is posted.
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from marshmallow import RAISE, Schema, ValidationError, fields, validate

from api.errors import messages_to_errors

__all__ = ["DEFAULT_MANIFEST", "Manifest", "ManifestError", "UploadSpec", "Visit", "load_manifest"]

DEFAULT_MANIFEST = Path(__file__).resolve().parents[2] / "examples" / "demo" / "manifest.json"


class ManifestError(ValueError):
    """The manifest cannot be used; the message names the file and the member."""


class _JobSchema(Schema):
    class Meta:
        unknown = RAISE

    reference = fields.String(required=True, validate=validate.Length(min=1))
    site = fields.String(required=True, validate=validate.Length(min=1))
    ruleset = fields.String(load_default=None)
    external_ref = fields.String(load_default=None)
    installation_ref = fields.String(load_default=None)
    tested_on = fields.String(load_default=None)


class _UploadSchema(Schema):
    class Meta:
        unknown = RAISE

    file = fields.String(required=True, validate=validate.Length(min=1))
    content_type = fields.String(required=True)
    adapter = fields.String(load_default=None, allow_none=True)
    profile = fields.String(load_default=None, allow_none=True)
    note = fields.String(load_default=None)


class _VisitSchema(Schema):
    class Meta:
        unknown = RAISE

    job = fields.Nested(_JobSchema, required=True)
    uploads = fields.List(fields.Nested(_UploadSchema), required=True, validate=validate.Length(min=1))


class _ManifestSchema(_VisitSchema):
    previous = fields.Nested(_VisitSchema, load_default=None)


@dataclass(frozen=True, slots=True)
class UploadSpec:
    path: Path
    content_type: str
    adapter: str | None
    profile: str | None

    def params(self) -> dict[str, str]:
        return {k: v for k, v in (("adapter", self.adapter), ("profile", self.profile)) if v}


@dataclass(frozen=True, slots=True)
class Visit:
    """A job to create and the files to post to it."""

    job: dict[str, Any]
    uploads: tuple[UploadSpec, ...]


@dataclass(frozen=True, slots=True)
class Manifest:
    source: Path
    job: dict[str, Any]
    uploads: tuple[UploadSpec, ...]
    previous: Visit | None = None


def load_manifest(path: Path = DEFAULT_MANIFEST) -> Manifest:
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except OSError as exc:
        raise ManifestError(f"cannot read the demo manifest {path}: {exc.strerror}") from exc
    except (UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise ManifestError(f"{path} is not a JSON document: {exc}") from exc
    if isinstance(data, dict):  # "_note" and other "_" members are comments
        data = {k: v for k, v in data.items() if not str(k).startswith("_")}
    try:
        loaded = _ManifestSchema().load(data)
    except ValidationError as exc:
        where = "; ".join(f"{e['pointer'] or '/'}: {e['reason']}" for e in messages_to_errors(exc.messages))
        raise ManifestError(f"{path}: {where}") from exc
    main = _visit(path, loaded, "")
    previous = None if loaded["previous"] is None else _visit(path, loaded["previous"], "/previous")
    return Manifest(source=path, job=main.job, uploads=main.uploads, previous=previous)


def _visit(path: Path, loaded: dict[str, Any], pointer: str) -> Visit:
    uploads = []
    for index, item in enumerate(loaded["uploads"]):
        file = (path.parent / item["file"]).resolve()
        if not file.is_file():
            raise ManifestError(f"{path}: {pointer}/uploads/{index}/file: no such file {file}")
        uploads.append(UploadSpec(file, item["content_type"], item["adapter"], item["profile"]))
    job = {k: v for k, v in loaded["job"].items() if v is not None}
    return Visit(job=job, uploads=tuple(uploads))
