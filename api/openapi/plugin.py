"""The apispec plugin that completes every operation as flask-smorest registers it.

Invariants:
- It runs after flask-smorest's Flask and marshmallow plugins (``extra_plugins``), once per
  route as its blueprint is registered, so a route added later is completed too.
- Before the marshmallow plugin expands schemas (:meth:`path_helper`), the view's dropped
  ``@blp.arguments`` are put back (:func:`api.openapi.operations.restore_arguments`) and
  the concrete path the key check is asked about is built from the path's parameters.
- After it (:meth:`operation_helper`), each operation gets, in this order: its id, its
  security and scope, the headers it reads, the constraints the server enforces, and
  its recorded examples. Manual documentation a route gives is kept, except ``security``,
  which is always the key check's own answer.
- The document's description lists the string formats (:mod:`api.openapi.formats`), and
  ``components.parameters`` holds the ``X-Request-Id`` parameter every operation refers to.
"""

from __future__ import annotations

from typing import Any

from apispec import APISpec, BasePlugin
from apispec.ext.marshmallow import MarshmallowPlugin
from flask import Flask

from api.openapi import constraints, examples, formats, headers, security
from api.openapi.operations import operation_id, restore_arguments, view_for

__all__ = ["DocumentCompletion"]


class DocumentCompletion(BasePlugin):
    """Complete each operation of ``app``'s document (see the module's invariants)."""

    def __init__(self, app: Flask) -> None:
        super().__init__()
        self.app = app
        self.spec: APISpec | None = None
        self._concrete: dict[str, str] = {}  # path template → a concrete path it matches

    def init_spec(self, spec: APISpec) -> None:
        super().init_spec(spec)
        self.spec = spec
        for plugin in spec.plugins:
            if isinstance(plugin, MarshmallowPlugin) and plugin.converter is not None:
                converter: Any = plugin.converter  # apispec's converter is untyped
                converter.add_attribute_function(formats.field_attribute)
                converter.add_attribute_function(constraints.body_attribute)
        spec.components.parameter("RequestId", "header", {
            key: value for key, value in headers.REQUEST_ID_DOC.items() if key != "in"})
        info = spec.options.setdefault("info", {})
        info["description"] = (info.get("description") or "") + formats.formats_table()

    def schema_helper(self, name: str, definition: dict[str, Any], **kwargs: Any) -> dict[str, Any] | None:
        """Keywords about a record as a whole (:func:`api.openapi.formats.record_statement`)."""
        return formats.record_statement(kwargs.get("schema"), definition) or None

    def path_helper(self, path: str | None = None, operations: dict[str, Any] | None = None,
                    parameters: list[dict[str, Any]] | None = None, **kwargs: Any) -> None:
        rule = kwargs.get("rule")
        if rule is None or path is None:
            return None
        for method, operation in (operations or {}).items():
            restore_arguments(operation, view_for(self.app, rule.endpoint, method))
        self._concrete[path] = security.sample_path(path, parameters or [])
        constraints.state_path_parameters(parameters or [])
        return None

    def operation_helper(self, path: str | None = None, operations: dict[str, Any] | None = None,
                         **kwargs: Any) -> None:
        rule = kwargs.get("rule")
        if rule is None or path is None or self.spec is None:
            return
        auth_on = bool(self.app.extensions["ohmtally.settings"].auth)
        recorded = examples.load_examples()
        schemas = self.spec.components.schemas
        for method, operation in (operations or {}).items():
            if "responses" in operation:  # flask-smorest's int keys; apispec makes them strings later
                operation["responses"] = {str(code): doc for code, doc in operation["responses"].items()}
            op_id = operation.setdefault("operationId", operation_id(self.app, rule.endpoint, method))
            public = security.is_public(self.app, rule.endpoint, method)
            scope = security.scope_for(self.app, self._concrete.get(path, path), method)
            security.apply_security(operation, public=public, scope=scope, auth_on=auth_on)
            headers.add_headers(operation, method=method, path=path)
            constraints.state_operation(operation, schemas)
            constraints.bind_ruleset_to_job(operation, path, self.spec)
            constraints.bind_board_to_path(operation, path, self.spec)
            constraints.state_refusals(operation)
            examples.attach_examples(operation, recorded.get(op_id), self._response_component)

    def _response_component(self, name: str) -> dict[str, Any]:
        """A response component by name, registered now if flask-smorest left it lazy."""
        assert self.spec is not None
        self.spec.components.get_ref("response", name)
        found: dict[str, Any] = self.spec.components.responses[name]
        return found
