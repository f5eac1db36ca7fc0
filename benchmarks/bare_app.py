"""A bare Flask JSON endpoint: the reference that /v1/tests is measured against (benchmarks/run_all.py).

Served by the same gunicorn command and configuration file as the service (docker/gunicorn.conf.py), it
does what any Flask JSON view does and nothing more: parse the JSON body, answer a fixed dict of the same
shape and about the same size as a /v1/tests answer (about 1 kB). No validation, no statistics, no request
id, metrics or access log.
"""

from __future__ import annotations

from flask import Flask, jsonify, request

ANSWER = {
    "method": "z-pooled",
    "method_reason": "every expected count under the null is at least 5 (the smallest is 441), so the normal "
                     "approximation is adequate: pooled z-test",
    "statistic": 2.083363232995052, "p_value": 0.0372181269670275, "log10_p_value": -1.4292454868837245,
    "alpha": 0.05, "reject_null": True, "alternative": "two-sided", "null_value": 0.0, "effect": "difference",
    "continuity_correction": False,
    "estimate": {"control_rate": 0.042782969885773625, "treatment_rate": 0.04907272348405918,
                 "difference": 0.006289753598285555, "relative_lift": 0.14701535716381042,
                 "odds_ratio": 1.1546021034357679},
    "interval": {"method": "farrington-manning", "confidence": 0.95, "lower": 0.0003732132488841826,
                 "upper": 0.01222852518875411},
    "assumptions": {"min_expected_count": 440.76523819429997, "threshold": 5.0, "normal_approximation_ok": True},
    "warnings": [],
    "summary": "Treatment 4.91% vs control 4.28%: a difference of +0.63 percentage points (95% CI +0.04 to +1.22 "
               "points); p = 0.0372, so the data show a difference between the rates at the 5% level (pooled "
               "z-test).",
}


def create_app() -> Flask:
    """Return the bare application: POST /v1/tests echoes a fixed answer, GET /readyz says ready."""
    app = Flask(__name__)

    @app.post("/v1/tests")
    def tests():
        request.get_json()
        return jsonify(ANSWER)

    @app.get("/readyz")
    def readyz():
        return jsonify(status="ready")

    return app
