"""A thin Python client for the Proportio service.

    >>> from proportio.client import Client
    >>> with Client("http://127.0.0.1:8000") as api:
    ...     result = api.test(control=(412, 9630), treatment=(471, 9598))
    ...     result["p_value"], result["interval"]["lower"]

Every method returns the decoded JSON response (a dict) with exactly the fields that
``/openapi.json`` documents for that endpoint. Every error answer raises :class:`ProportioError`,
which carries the RFC 9457 problem fields. Groups may be given as ``(successes, trials)`` tuples,
``"successes/trials"`` strings or ``{"successes": .., "trials": .., "label": ..}`` dicts.
"""

from __future__ import annotations

import time
from collections.abc import Mapping
from typing import Any

import requests

GroupLike = tuple[int, int] | list[int] | str | Mapping[str, Any]

# Every Proportio endpoint is a pure computation with no side effects, so a request that failed
# before any answer (connection refused or reset) or with 502/503/504 can be sent again safely.
RETRY_STATUSES = (502, 503, 504)


class ProportioError(Exception):
    """An error answer from the service (RFC 9457 problem) or a transport failure (status 0)."""

    def __init__(self, status: int, title: str, detail: str, errors: dict[str, list[str]] | None = None,
                 type: str = "about:blank", request_id: str | None = None) -> None:
        super().__init__(f"{status} {title}: {detail}")
        self.status = status
        self.title = title
        self.detail = detail
        self.errors = errors or {}
        self.type = type
        self.request_id = request_id


def group(value: GroupLike) -> dict[str, Any]:
    """Normalise a group given as a tuple, a "s/n" string or a dict into the JSON object."""
    if isinstance(value, Mapping):
        return dict(value)
    if isinstance(value, str):
        successes, sep, trials = value.partition("/")
        if not sep:
            raise ValueError(f'a group string must look like "successes/trials", got {value!r}')
        return {"successes": int(successes), "trials": int(trials)}
    successes, trials = value
    return {"successes": successes, "trials": trials}


class Client:
    """Call a Proportio service; reuses one HTTP connection pool."""

    def __init__(self, base_url: str = "http://127.0.0.1:8000", token: str | None = None, timeout: float = 10.0,
                 retries: int = 2, backoff: float = 0.2, session: requests.Session | None = None) -> None:
        self.base_url = base_url.rstrip("/")
        self.timeout = timeout
        self.retries = retries
        self.backoff = backoff
        self.session = session or requests.Session()
        self.session.headers["Accept"] = "application/json, application/problem+json"
        if token:
            self.session.headers["Authorization"] = f"Bearer {token}"

    def __enter__(self) -> Client:
        return self

    def __exit__(self, *exc) -> None:
        self.close()

    def close(self) -> None:
        self.session.close()

    # -- transport -------------------------------------------------------------------------------

    def request(self, method: str, path: str, body: dict | None = None) -> Any:
        """Send one request and return the decoded JSON; raise ProportioError on any failure."""
        url = self.base_url + path
        for attempt in range(self.retries + 1):
            try:
                response = self.session.request(method, url, json=body, timeout=self.timeout)
            except (requests.ConnectionError, requests.Timeout) as exc:
                if attempt < self.retries:
                    time.sleep(self.backoff * 2**attempt)
                    continue
                raise ProportioError(0, "Connection failed", f"{method} {url}: {exc}") from exc
            if response.status_code in RETRY_STATUSES and attempt < self.retries:
                time.sleep(self.backoff * 2**attempt)
                continue
            if response.status_code >= 400:
                raise _error_from(response)
            return response.json()
        raise AssertionError("unreachable")

    def _post(self, path: str, body: dict) -> dict:
        return self.request("POST", path, {k: v for k, v in body.items() if v is not None})

    # -- endpoints ---------------------------------------------------------------------------------

    def test(self, control: GroupLike, treatment: GroupLike, *, method: str | None = None,
             alternative: str | None = None, null_value: float | None = None, effect: str | None = None,
             alpha: float | None = None, continuity_correction: bool | None = None) -> dict:
        """POST /v1/tests: test whether the treatment rate differs from the control rate."""
        return self._post("/v1/tests", {
            "control": group(control), "treatment": group(treatment), "method": method,
            "alternative": alternative, "null_value": null_value, "effect": effect, "alpha": alpha,
            "continuity_correction": continuity_correction,
        })

    def interval(self, effect: str = "difference", *, control: GroupLike | None = None,
                 treatment: GroupLike | None = None, group_: GroupLike | None = None, method: str | None = None,
                 confidence: float | None = None, **kwargs: Any) -> dict:
        """POST /v1/intervals: a confidence interval (pass ``group=`` for one proportion)."""
        single = kwargs.pop("group", group_)
        if kwargs:
            raise TypeError(f"unexpected arguments: {', '.join(kwargs)}")
        return self._post("/v1/intervals", {
            "effect": effect, "method": method, "confidence": confidence,
            "control": None if control is None else group(control),
            "treatment": None if treatment is None else group(treatment),
            "group": None if single is None else group(single),
        })

    def methods(self) -> dict:
        """GET /v1/methods: the method catalogue with references and cautions."""
        return self.request("GET", "/v1/methods")

    def health(self) -> dict:
        """GET /healthz."""
        return self.request("GET", "/healthz")


def _error_from(response: requests.Response) -> ProportioError:
    try:
        body = response.json()
    except ValueError:
        body = {}
    if not isinstance(body, dict):
        body = {}
    return ProportioError(
        status=response.status_code,
        title=str(body.get("title", response.reason or "Error")),
        detail=str(body.get("detail", response.text[:200])),
        errors=body.get("errors") or {},
        type=str(body.get("type", "about:blank")),
        request_id=body.get("request_id") or response.headers.get("X-Request-ID"),
    )
