#!/usr/bin/env python3
"""Plan a study with samplewright: size it, print its justification, save its power curve.

Invented scenario (demo data, not from a real study): a coatings lab compares the pull-off
adhesion of four primer formulations on steel panels. It expects means of 4.2, 4.6, 4.9 and
4.4 MPa with a panel-to-panel SD of 0.6 MPa, wants 90 % power at alpha = 0.05, and expects
to lose 5 % of the panels to coating defects.

Three calls:

1. POST /v1/sample-size: panels per primer, the power reached, the design one panel smaller;
2. POST /v1/report: the justification text for the protocol (same request, same digest);
3. POST /v1/power-curve with ``Accept: image/png``: the chart, saved as a PNG file.

Standard library only (urllib), so it runs with any Python 3.9+ and nothing to install:

    SAMPLEWRIGHT_URL=http://127.0.0.1:8000 python3 examples/python/plan_study.py --chart power-curve.png

Exit status 0 when every call succeeded; 1 when one failed (the reason on stderr: the
problem details the service sent, or why it could not be reached).
"""

from __future__ import annotations

import argparse
import json
import os
import sys
import urllib.error
import urllib.request

BASE_URL = os.environ.get("SAMPLEWRIGHT_URL", "http://127.0.0.1:8000").rstrip("/")
TIMEOUT_SECONDS = 30

#: The planned study, as the request body of POST /v1/sample-size.
PLANNED_STUDY = {
    "alpha": 0.05,
    "target_power": 0.9,
    "dropout_rate": 0.05,
    "design": {"type": "one_way_anova", "group_means": [4.2, 4.6, 4.9, 4.4], "sd": 0.6},
}


class CallFailed(Exception):
    """A call that did not get a 2xx answer."""


def call(path: str, body: dict, accept: str = "application/json") -> bytes:
    """POST ``body`` as JSON to ``path``; the response body, or CallFailed with the reason."""
    request = urllib.request.Request(
        BASE_URL + path,
        data=json.dumps(body).encode("utf-8"),
        headers={"Content-Type": "application/json", "Accept": accept},
        method="POST",
    )
    try:
        with urllib.request.urlopen(request, timeout=TIMEOUT_SECONDS) as response:
            return response.read()
    except urllib.error.HTTPError as exc:  # a 4xx/5xx answer: problem details (RFC 9457)
        raise CallFailed(describe_problem(exc.code, exc.read())) from None
    except (urllib.error.URLError, OSError) as exc:
        reason = getattr(exc, "reason", exc)
        raise CallFailed(f"cannot reach samplewright at {BASE_URL}: {reason}") from None


def describe_problem(status: int, raw: bytes) -> str:
    """One readable paragraph from a problem+json body (or whatever the body was)."""
    try:
        problem = json.loads(raw)
    except ValueError:
        return f"HTTP {status}: {raw[:300].decode('utf-8', 'replace')}"
    lines = [f"HTTP {status} {problem.get('title', '')}: {problem.get('detail', '')}"]
    for field, messages in (problem.get("errors") or {}).items():
        lines.append(f"  {field}: {'; '.join(messages)}")
    if problem.get("request_id"):
        lines.append(f"  request id: {problem['request_id']}")
    return "\n".join(lines)


def call_json(path: str, body: dict) -> dict:
    return json.loads(call(path, body))


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--chart", default="power-curve.png", help="where to save the PNG (default: %(default)s)")
    args = parser.parse_args(argv)
    try:
        # 1. The sample size.
        answer = call_json("/v1/sample-size", PLANNED_STUDY)
        groups = len(answer["group_sizes"])
        print("Study: pull-off adhesion of 4 primer formulations (invented scenario)")
        print(f"Units per group: {answer['n_per_group']} ({groups} groups, {answer['n_total']} in total)")
        print(f"Achieved power: {answer['achieved_power']!r} (target {answer['target_power']!r})")
        smaller = answer["one_step_smaller"]
        print(f"One unit fewer per group: {smaller['group_sizes'][0]} per group, power {smaller['power']!r}")
        enrol = answer["enrolment"]
        if enrol:
            print(f"Enrol: {enrol['group_sizes'][0]} per group, {enrol['n_total']} in total "
                  f"(dropout {enrol['dropout_rate']:g})")
        print(f"Request digest: {answer['provenance']['request_digest']}")

        # 2. The justification text, for the same request (so it carries the same digest).
        report = call_json("/v1/report", {"operation": "sample-size", "format": "text", "request": PLANNED_STUDY})
        print()
        print(report["text"], end="")
        print()

        # 3. The power curve as a PNG: sizes from 2 to twice the answer, the target marked.
        curve_request = {
            "alpha": PLANNED_STUDY["alpha"],
            "target_power": PLANNED_STUDY["target_power"],
            "range": {"vary": "n_per_group", "from": 2, "to": 2 * answer["n_per_group"]},
            "design": PLANNED_STUDY["design"],
        }
        png = call("/v1/power-curve", curve_request, accept="image/png")
        with open(args.chart, "wb") as out:
            out.write(png)
        print(f"Power curve saved: {args.chart} ({len(png)} bytes, image/png)")
    except CallFailed as exc:
        print(f"samplewright call failed: {exc}", file=sys.stderr)
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main())
