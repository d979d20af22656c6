"""Reading every page of a paged listing, as a client does: follow ``next_cursor`` to the end."""

from __future__ import annotations

from typing import Any, Protocol
from urllib.parse import urlencode

__all__ = ["all_pages"]


class _Getter(Protocol):
    def get(self, url: str, **kwargs: Any) -> Any: ...


def _json(response: Any) -> Any:
    return response.get_json() if hasattr(response, "get_json") else response.json()


def all_pages(client: _Getter, url: str, key: str, *, limit: int = 1000) -> list[Any]:
    """Every item of ``key`` across the pages of ``url`` (a Flask test client or an httpx client)."""
    items: list[Any] = []
    joiner = "&" if "?" in url else "?"
    cursor: str | None = None
    while True:
        query = {"limit": limit, **({"cursor": cursor} if cursor else {})}
        body = _json(client.get(f"{url}{joiner}{urlencode(query)}"))
        items.extend(body[key])
        cursor = body.get("next_cursor")
        if not cursor:
            return items
