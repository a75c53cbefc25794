"""The selection in the address bar: parse and update ``?players=P001,P028&k=2``.

Every view keeps its selection in the query string, so a view can be shared
by copying its address and the views hand the selection on to each other
(the navigation links carry the current query). Keys used across views:

``players``   players side by side (comma separated, 2 to 4)
``player``    one player (season view, streak odds)
``season``    one season (absent: every season)
``type``      attempt type (absent: ``field_goal`` where present)
``k``         streak length
"""

from __future__ import annotations

from urllib.parse import parse_qsl, urlencode

__all__ = ["parse_query", "query_int", "query_list", "update_query"]


def parse_query(search: str | None) -> dict[str, str]:
    """``"?a=1&b=x"`` -> ``{"a": "1", "b": "x"}`` (the last value of a repeated key wins)."""
    if not search:
        return {}
    return dict(parse_qsl(search.lstrip("?"), keep_blank_values=False))


def query_list(params: dict[str, str], key: str) -> list[str]:
    """A comma-separated value as a list (empty items dropped)."""
    return [item.strip() for item in params.get(key, "").split(",") if item.strip()]


def query_int(params: dict[str, str], key: str, default: int, *, low: int | None = None, high: int | None = None) -> int:
    """An integer value, ``default`` when missing or unreadable, clipped to [low, high]."""
    try:
        value = int(params[key])
    except (KeyError, ValueError):
        return default
    if low is not None:
        value = max(low, value)
    if high is not None:
        value = min(high, value)
    return value


def update_query(search: str | None, **values) -> str:
    """The query ``search`` with ``values`` set (``None`` or empty removes a key).

    Lists are joined with commas. Returns ``""`` or a string starting with
    ``"?"``; keys keep their first position, new keys go last.
    """
    params = parse_query(search)
    for key, value in values.items():
        if isinstance(value, (list, tuple)):
            value = ",".join(str(v) for v in value)
        if value is None or value == "":
            params.pop(key, None)
        else:
            params[key] = str(value)
    text = urlencode(params, safe=",")
    return f"?{text}" if text else ""
