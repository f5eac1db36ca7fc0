"""The service with one part of a request's cost taken away: where the gap to the bare endpoint lies.

``python benchmarks/run_all.py --only http --breakdown`` serves these beside the service and the bare
endpoint (benchmarks/bare_app.py) and prints their throughput against the bare one. They are diagnostics,
never served for real:

statistics_memoised  the whole service, but /v1/tests answers a request it has seen before from a memo
                     instead of computing it (the benchmark sends one body), so its ratio is the one the
                     service would have with statistics that cost nothing: validation, dump, JSON, request
                     id, headers, metrics and the access log line remain.
without_hooks        the whole service without its before- and after-request hooks (request id, bearer
                     check, security headers, metrics, access log line); statistics, validation and dump
                     remain.

Both answer /v1/tests with the same JSON as the service (tests/unit/test_benchmarks_smoke.py).
"""

from __future__ import annotations

from proportio import operations
from proportio.api import create_app


def statistics_memoised():
    """The service, answering a /v1/tests request it has answered before from a memo."""
    app = create_app()
    compute = operations.run_test
    memo: dict[str, object] = {}

    def run_test(data: dict):
        key = repr(data)
        found = memo.get(key)
        if found is None:
            if len(memo) > 1_000:
                memo.clear()
            found = memo[key] = compute(data)
        return found

    operations.run_test = run_test  # the view looks it up on every call
    return app


def without_hooks():
    """The service without its request hooks (id, auth, headers, metrics, access log)."""
    app = create_app()
    app.before_request_funcs = {}
    app.after_request_funcs = {}
    return app
