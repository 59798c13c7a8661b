"""POST /v1/report and provenance: the text carries the computation's numbers; digests identify requests.

Every number the report is checked for comes from the computation in the same response
(or from the single endpoint asked the same question): the text must repeat it, not
recompute it. Digests are checked against hashlib on the documented canonical form.
"""

from __future__ import annotations

import hashlib
import json
import xml.etree.ElementTree as ET

import pytest

from samplewright.api import report as report_module
from samplewright.api.designs import ADAPTERS
from samplewright.api.provenance import CANONICAL_FORM, canonical_json, request_digest
from samplewright.api.report import number, probability

REPORT = "/v1/report"
MEANS = {"type": "one_way_anova", "group_means": [61, 64, 66], "sd": 5}
SAMPLE = {"alpha": 0.05, "target_power": 0.9, "dropout_rate": 0.1, "design": MEANS}
POWER = {"n_per_group": 12, "design": MEANS}
DETECT = {"target_power": 0.8, "n_per_group": 12, "design": {"type": "one_way_anova", "groups": 3, "sd": 5}}
REFERENCE = ADAPTERS["one_way_anova"].reference


def _report(post_json, assert_ok, operation, request, fmt="markdown"):
    return assert_ok(post_json(REPORT, {"operation": operation, "request": request, "format": fmt}))


@pytest.mark.parametrize("fmt", ["markdown", "text", "html"])
def test_sample_size_report_has_the_numbers_and_the_reference(post_json, assert_ok, fmt):
    """The justification repeats the computed sizes, powers, enrolment, test details, digest and reference."""
    out = _report(post_json, assert_ok, "sample-size", SAMPLE, fmt)
    single = assert_ok(post_json("/v1/sample-size", SAMPLE))
    assert out["result"] == single and out["provenance"] == single["provenance"]
    text = " ".join(out["text"].split())  # plain text wraps lines
    if fmt == "markdown":
        text = text.replace("\\", "")
    for expected in (
        "27 units per group", f"({single['n_total']} in total",
        probability(single["achieved_power"], 0.9), probability(single["one_step_smaller"]["power"], 0.9),
        "30 in each of the 3 groups", str(single["enrolment"]["n_total"]),
        number(single["noncentrality"]), number(single["critical_value"]), "2 and 78 degrees of freedom",
        single["provenance"]["request_digest"], single["provenance"]["service_version"],
        single["provenance"]["scipy_version"], single["provenance"]["numpy_version"],
        "61, 64, 66", "0.05", "0.9", "0.1",
    ):
        assert expected in text, expected
    assert " ".join(REFERENCE.split()) in (text if fmt != "html" else text.replace("&#x27;", "'"))
    for caution in single["cautions"]:
        assert " ".join(caution.split()) in (text if fmt != "html" else text.replace("&#x27;", "'"))
    assert out["media_type"] == {"markdown": "text/markdown", "text": "text/plain", "html": "text/html"}[fmt]


def test_one_step_smaller_is_not_rounded_onto_the_target():
    """0.89997 next to a target of 0.9 is written with enough digits to stay below it (not 0.9000)."""
    assert probability(0.8999712, 0.9) == "0.89997"
    assert probability(0.9115, 0.9) == "0.9115"
    assert probability(0.9, 0.9) == "0.9000"
    assert probability(0.123456) == "0.1235"


def test_power_and_detectable_reports(post_json, assert_ok):
    """The power and detectable-effect texts state their results as computed."""
    power = _report(post_json, assert_ok, "power", POWER, "text")
    text = " ".join(power["text"].split())
    assert probability(power["result"]["power"]) in text and "12 in each of the 3 groups" in text
    detect = _report(post_json, assert_ok, "detectable-effect", DETECT, "text")
    text = " ".join(detect["text"].split())
    result = detect["result"]
    assert f"cohens f = {number(result['cohens_f'])}" in text and f"min range = {number(result['min_range'])}" in text
    assert "power 0.8" in text


def test_html_report_is_escaped_and_well_formed(post_json, assert_ok, monkeypatch):
    """Text from the adapter is escaped in HTML, and the fragment parses as XML."""
    adapter = ADAPTERS["one_way_anova"]
    monkeypatch.setattr(type(adapter), "title", "<script>alert('x')</script> & co")
    out = _report(post_json, assert_ok, "power", POWER, "html")
    assert "<script>" not in out["text"]
    assert "&lt;script&gt;alert(&#x27;x&#x27;)&lt;/script&gt; &amp; co" in out["text"]
    root = ET.fromstring(out["text"])
    assert root.tag == "article" and root.find("table") is not None


def test_markdown_escapes_markup_characters(monkeypatch):
    """Characters with a Markdown meaning are escaped in prose (a list item stays literal)."""
    md = report_module.to_markdown([("p", "σ_m and *f* [x]")])
    assert md == "σ\\_m and \\*f\\* \\[x\\]\n"


def test_report_of_an_invalid_request_names_the_inner_field(post_json, assert_problem):
    """A computation the single endpoint refuses is a 422 whose field names sit under request."""
    bad = dict(SAMPLE, design=dict(MEANS, sd=-1))
    assert_problem(post_json(REPORT, {"operation": "sample-size", "request": bad}), 422, "request.design.sd")
    assert_problem(post_json(REPORT, {"operation": "simulate", "request": SAMPLE}), 422, "operation")
    assert_problem(post_json(REPORT, {"operation": "power", "request": POWER, "format": "pdf"}), 422, "format")


# -- provenance --------------------------------------------------------------------------------


@pytest.mark.parametrize("route, body", [("/v1/power", POWER), ("/v1/sample-size", SAMPLE),
                                         ("/v1/detectable-effect", DETECT)])
def test_every_computation_response_has_provenance(post_json, assert_ok, route, body):
    """Provenance: versions, method id and reference, and the digest of the validated request."""
    out = assert_ok(post_json(route, body))
    prov = out["provenance"]
    assert prov["method_id"] == out["method"]["id"] and prov["method_reference"] == out["method"]["reference"]
    assert prov["canonical_form"] == CANONICAL_FORM
    assert len(prov["request_digest"]) == 64 and set(prov["request_digest"]) <= set("0123456789abcdef")
    for key in ("service_version", "numpy_version", "scipy_version"):
        assert prov[key]


def test_digest_is_sha256_of_the_documented_canonical_form(post_json, assert_ok):
    """The digest is SHA-256 of sorted-key, compact, UTF-8 JSON of the validated, defaults-filled request."""
    out = assert_ok(post_json("/v1/power", POWER))
    validated = {"alpha": 0.05, "design": {"group_means": [61.0, 64.0, 66.0], "sd": 5.0, "type": "one_way_anova"},
                 "n_per_group": 12}
    text = '{"alpha":0.05,"design":{"group_means":[61.0,64.0,66.0],"sd":5.0,"type":"one_way_anova"},"n_per_group":12}'
    assert canonical_json(validated) == text
    assert out["provenance"]["request_digest"] == hashlib.sha256(text.encode("utf-8")).hexdigest() == request_digest(validated)


def test_same_request_same_digest_changed_request_different(post_json, assert_ok):
    """Same question (however the numbers and keys are spelled) → same digest; any change → a different one."""
    def digest(body):
        return assert_ok(post_json("/v1/sample-size", body))["provenance"]["request_digest"]

    base = digest(SAMPLE)
    assert digest(json.loads(json.dumps(SAMPLE))) == base
    respelled = {"design": {"sd": 5.0, "group_means": [61.0, 64, 6.6e1], "type": "one_way_anova"},
                 "dropout_rate": 0.1, "target_power": 0.9}  # alpha left to its default 0.05
    assert digest(respelled) == base
    changed = [dict(SAMPLE, alpha=0.01), dict(SAMPLE, target_power=0.8), dict(SAMPLE, dropout_rate=0.0),
               dict(SAMPLE, design=dict(MEANS, sd=5.5)), dict(SAMPLE, design=dict(MEANS, group_means=[61, 64, 67]))]
    digests = {digest(body) for body in changed}
    assert base not in digests and len(digests) == len(changed)


def test_report_provenance_is_the_computations(post_json, assert_ok):
    """The report's digest is the computation's: the same for the same request, whatever the format."""
    a = _report(post_json, assert_ok, "sample-size", SAMPLE, "markdown")["provenance"]["request_digest"]
    b = _report(post_json, assert_ok, "sample-size", SAMPLE, "html")["provenance"]["request_digest"]
    single = assert_ok(post_json("/v1/sample-size", SAMPLE))["provenance"]["request_digest"]
    assert a == b == single
