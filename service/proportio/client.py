"""A thin Python client for the Proportio service.

    >>> from proportio.client import Client
    >>> with Client("http://127.0.0.1:8000") as api:
    ...     result = api.test(control=(412, 9630), treatment=(471, 9598))
    ...     result["p_value"], result["interval"]["lower"]

Every method returns the decoded JSON response (a dict) with exactly the fields that
``/openapi.json`` documents for that endpoint. Every error answer raises :class:`ProportioError`,
which carries the RFC 9457 problem fields. Groups may be given as ``(successes, trials)`` tuples,
``"successes/trials"`` strings or ``{"successes": .., "trials": .., "label": ..}`` dicts.

=====================================  ================================  ============================================
method                                 endpoint                          main fields of the returned dict
=====================================  ================================  ============================================
test(control, treatment)               POST /v1/tests                    method, statistic, p_value, reject_null,
                                                                         estimate, interval, warnings, summary
interval(effect, control, treatment)   POST /v1/intervals                effect, method, confidence, estimate, lower,
                                                                         upper, warnings
sample_size(baseline_rate, ...)        POST /v1/sample-size              n_control, n_treatment, n_total, power,
                                                                         formula, summary (curve with a sweep)
batch(comparisons)                     POST /v1/batch                    results (a /v1/tests object each, with
                                                                         adjusted_p_value), adjustment, count
batch_columns(xc, nc, xt, nt)          POST /v1/batch (columns form)     columns (one list per answer field),
                                                                         options, adjustment, count
arms(groups)                           POST /v1/arms                     omnibus, comparisons, control, adjustment,
                                                                         summary, warnings
allocation_check(observed)             POST /v1/allocation-check         statistic, df, p_value, mismatch, arms,
                                                                         summary, warnings
sequential_plan(looks)                 POST /v1/sequential/plan          looks (boundaries), inflation_factor,
                                                                         max_sample_size, summary
sequential_analyze(looks, max_trials)  POST /v1/sequential/analyze       looks, decision, stopped_at, summary
always_valid(control, treatment)       POST /v1/sequential/always-valid  lower, upper, estimate, p_value, reject_null
guardrail(control, treatment, margin)  POST /v1/guardrail                verdict, test, interval, estimate,
                                                                         additional_trials_per_group, summary
methods()                              GET /v1/methods                   methods, cautions
health()                               GET /healthz                      status, version
=====================================  ================================  ============================================

Transport: one ``requests.Session`` per client (a keep-alive connection pool; use the client as a
context manager or call :meth:`Client.close`); ``timeout`` seconds per request, or a ``(connect, read)``
pair; ``token`` is sent as ``Authorization: Bearer``. A request is sent again (``retries`` times, with
exponential ``backoff``) only where that is safe and useful: the connection failed or could not be
opened in time, or the answer was 502, 503 or 504. Every endpoint is a side-effect-free computation, so
a repeat cannot do harm; a *read* timeout is not retried, because the service has the request and is
still computing it, and a repeat would only add load. Status 0 in :class:`ProportioError` means no
usable answer arrived (connection failure, timeout, or a body that is not JSON).
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

    def __init__(self, base_url: str = "http://127.0.0.1:8000", token: str | None = None,
                 timeout: float | tuple[float, float] = 10.0,
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
            except requests.ReadTimeout as exc:
                raise ProportioError(0, "Timed out", f"{method} {url}: no answer within the read timeout "
                                     f"({self.timeout}); not retried, the service may still be computing it") from exc
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
            try:
                return response.json()
            except ValueError as exc:
                raise ProportioError(0, "Invalid response", f"{method} {url}: status {response.status_code} "
                                     f"but the body is not JSON: {response.text[:200]!r}") from exc
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

    def sample_size(self, baseline_rate: float, *, expected_rate: float | None = None,
                    absolute_effect: float | None = None, relative_effect: float | None = None,
                    alpha: float | None = None, power: float | None = None, alternative: str | None = None,
                    allocation_ratio: float | None = None, design: str | None = None, margin: float | None = None,
                    method: str | None = None, continuity_correction: bool | None = None,
                    solve_for: str | None = None, n_control: int | None = None, n_treatment: int | None = None,
                    sweep: Mapping[str, Any] | tuple[str, list] | None = None) -> dict:
        """POST /v1/sample-size: the sample size, power or detectable effect of a comparison of two rates.

        ``sweep`` asks for a curve, as ``{"parameter": "n_control", "values": [...]}`` or the pair
        ``("n_control", [...])``; the answer then holds ``curve``, one plan per value.
        """
        if sweep is not None and not isinstance(sweep, Mapping):
            parameter, values = sweep
            sweep = {"parameter": parameter, "values": list(values)}
        return self._post("/v1/sample-size", {
            "baseline_rate": baseline_rate, "expected_rate": expected_rate, "absolute_effect": absolute_effect,
            "relative_effect": relative_effect, "alpha": alpha, "power": power, "alternative": alternative,
            "allocation_ratio": allocation_ratio, "design": design, "margin": margin, "method": method,
            "continuity_correction": continuity_correction, "solve_for": solve_for, "n_control": n_control,
            "n_treatment": n_treatment, "sweep": None if sweep is None else dict(sweep),
        })

    def sequential_plan(self, looks: int | None = None, *, information_fractions: list[float] | None = None,
                        alpha: float | None = None, alternative: str | None = None, spending: str | None = None,
                        rho: float | None = None, gamma: float | None = None, power: float | None = None,
                        futility: str | Mapping[str, Any] | None = None, futility_rho: float | None = None,
                        futility_gamma: float | None = None, baseline_rate: float | None = None,
                        expected_rate: float | None = None, absolute_effect: float | None = None,
                        relative_effect: float | None = None, allocation_ratio: float | None = None) -> dict:
        """POST /v1/sequential/plan: group-sequential boundaries (and max_sample_size with baseline_rate).

        ``futility`` is a spending-function name (with ``futility_rho`` / ``futility_gamma``) or the
        whole object ``{"spending": .., "rho": .., "gamma": ..}``.
        """
        if isinstance(futility, str):
            futility = {"spending": futility, "rho": futility_rho, "gamma": futility_gamma}
        return self._post("/v1/sequential/plan", {
            "looks": looks, "information_fractions": None if information_fractions is None else list(
                information_fractions), "alpha": alpha, "alternative": alternative, "spending": spending,
            "rho": rho, "gamma": gamma, "power": power,
            "futility": None if futility is None else {k: v for k, v in futility.items() if v is not None},
            "baseline_rate": baseline_rate, "expected_rate": expected_rate, "absolute_effect": absolute_effect,
            "relative_effect": relative_effect, "allocation_ratio": allocation_ratio,
        })

    def sequential_analyze(self, looks: list, max_trials: int, *, alpha: float | None = None,
                           alternative: str | None = None, spending: str | None = None, rho: float | None = None,
                           gamma: float | None = None) -> dict:
        """POST /v1/sequential/analyze: judge the cumulative counts of every look so far.

        Each look is ``{"control": group, "treatment": group}`` or a ``(control, treatment)`` pair of
        groups, e.g. ``((341, 7948), (389, 7941))``; counts are cumulative.
        """
        rows = []
        for look in looks:
            if isinstance(look, Mapping):
                rows.append({"control": group(look["control"]), "treatment": group(look["treatment"])})
            else:
                control, treatment = look
                rows.append({"control": group(control), "treatment": group(treatment)})
        return self._post("/v1/sequential/analyze", {
            "looks": rows, "max_trials": max_trials, "alpha": alpha, "alternative": alternative,
            "spending": spending, "rho": rho, "gamma": gamma,
        })

    def always_valid(self, control: GroupLike, treatment: GroupLike, *, alpha: float | None = None,
                     tuning: float | None = None, null_value: float | None = None) -> dict:
        """POST /v1/sequential/always-valid: a confidence sequence valid however often it is checked."""
        return self._post("/v1/sequential/always-valid", {
            "control": group(control), "treatment": group(treatment), "alpha": alpha, "tuning": tuning,
            "null_value": null_value,
        })

    def guardrail(self, control: GroupLike, treatment: GroupLike, margin: float, *, margin_type: str | None = None,
                  direction: str | None = None, alpha: float | None = None, metric: str | None = None) -> dict:
        """POST /v1/guardrail: is the treatment no worse than the control by more than ``margin``?

        Returns ``verdict`` (``pass``, ``fail`` or ``inconclusive``), ``test``, ``interval``, ``estimate``,
        the options echoed, ``additional_trials_per_group``, ``summary`` and ``warnings``.
        """
        return self._post("/v1/guardrail", {
            "control": group(control), "treatment": group(treatment), "margin": margin, "margin_type": margin_type,
            "direction": direction, "alpha": alpha, "metric": metric,
        })

    def batch(self, comparisons: list, *, adjustment: str | None = None) -> dict:
        """POST /v1/batch: many two-group tests in one request, answered in order.

        Each comparison is a /v1/tests request (a dict) or a ``(control, treatment)`` pair of groups.
        ``adjustment`` adjusts the p-values across the comparisons (none, bonferroni, holm, hochberg,
        benjamini-hochberg, benjamini-yekutieli). A batch of 100,000 takes seconds: give the Client a
        ``timeout`` to match.
        """
        items = []
        for item in comparisons:
            if isinstance(item, Mapping):
                items.append(dict(item))
            else:
                control, treatment = item
                items.append({"control": group(control), "treatment": group(treatment)})
        return self._post("/v1/batch", {"comparisons": items, "adjustment": adjustment})

    def batch_columns(self, control_successes, control_trials, treatment_successes, treatment_trials, *,
                      fields: list[str] | None = None, adjustment: str | None = None, method: str | None = None,
                      alternative: str | None = None, null_value: float | None = None, effect: str | None = None,
                      alpha: float | None = None, continuity_correction: bool | None = None) -> dict:
        """POST /v1/batch in its columnar form: many comparisons sharing one set of /v1/tests options.

        The four counts are sequences (lists or numpy arrays) with one element per comparison. The answer
        holds ``columns``: one list per field (``fields`` picks them, default all; what is left out is not
        computed), the same values a /v1/tests answer holds, in the same order; and the shared ``options``.
        """
        options = {"method": method, "alternative": alternative, "null_value": null_value, "effect": effect,
                   "alpha": alpha, "continuity_correction": continuity_correction}
        columns = {
            "control": {"successes": _as_list(control_successes), "trials": _as_list(control_trials)},
            "treatment": {"successes": _as_list(treatment_successes), "trials": _as_list(treatment_trials)},
            **{k: v for k, v in options.items() if v is not None},
        }
        return self._post("/v1/batch", {"columns": columns, "fields": fields, "adjustment": adjustment})

    def arms(self, groups: list, *, control: str | None = None, comparisons: str | None = None,
             adjustment: str | None = None, method: str | None = None, effect: str | None = None,
             alternative: str | None = None, alpha: float | None = None,
             simultaneous_intervals: bool | None = None) -> dict:
        """POST /v1/arms: an omnibus test across several arms and adjusted pairwise comparisons.

        ``groups`` are dicts with ``label``, ``successes`` and ``trials``, or ``(label, successes, trials)``.
        """
        rows = []
        for g in groups:
            if isinstance(g, Mapping):
                rows.append(dict(g))
            else:
                label, successes, trials = g
                rows.append({"label": label, "successes": successes, "trials": trials})
        return self._post("/v1/arms", {
            "groups": rows, "control": control, "comparisons": comparisons, "adjustment": adjustment,
            "method": method, "effect": effect, "alternative": alternative, "alpha": alpha,
            "simultaneous_intervals": simultaneous_intervals,
        })

    def allocation_check(self, observed: list[int], *, expected_weights: list[float] | None = None,
                         threshold: float | None = None, labels: list[str] | None = None) -> dict:
        """POST /v1/allocation-check: does the traffic split match the plan (sample-ratio mismatch)?"""
        return self._post("/v1/allocation-check", {
            "observed": list(observed),
            "expected_weights": None if expected_weights is None else list(expected_weights),
            "threshold": threshold, "labels": None if labels is None else list(labels),
        })


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


def _as_list(values) -> list:
    """A sequence of counts as a JSON-ready list (numpy arrays included)."""
    return values.tolist() if hasattr(values, "tolist") else list(values)
