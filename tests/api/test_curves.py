"""POST /v1/power-curve and /v1/power-grid: points equal single calls; charts are real images.

The reference for every number is the single endpoint (POST /v1/power, /v1/sample-size)
asked the same question: exact equality, tolerance 0.
"""

from __future__ import annotations

import json
import xml.etree.ElementTree as ET

import pytest

from samplewright.api.curves import POWER_LABEL, SIZE_LABEL

CURVE = "/v1/power-curve"
GRID = "/v1/power-grid"
MEANS = {"type": "one_way_anova", "group_means": [61, 64, 66], "sd": 5}
F_DESIGN = {"type": "one_way_anova", "cohens_f": 0.25, "groups": 4}
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"
SVG_NS = "{http://www.w3.org/2000/svg}"


def _json(post_json, path, body, assert_ok):
    return assert_ok(post_json(path, body))


def test_size_curve_points_equal_single_power_calls(post_json, assert_ok):
    """Every point of a size curve is the /v1/power answer for that n (power, sizes, total)."""
    out = _json(post_json, CURVE, {"design": MEANS, "alpha": 0.01, "range": {"vary": "n_per_group", "from": 4, "to": 30}},
                assert_ok)
    assert [p["n_per_group"] for p in out["points"]] == list(range(4, 31))
    for point in out["points"]:
        single = assert_ok(post_json("/v1/power", {"design": MEANS, "alpha": 0.01, "n_per_group": point["n_per_group"]}))
        assert point["power"] == single["power"]
        assert point["group_sizes"] == single["group_sizes"] and point["n_total"] == single["n_total"]
    assert out["x_label"] == SIZE_LABEL and out["y_label"] == POWER_LABEL
    assert out["smallest_size"] is None and out["target_power"] is None


def test_smallest_size_equals_sample_size_endpoint(post_json, assert_ok):
    """The curve's smallest size reaching the target is exactly the /v1/sample-size answer."""
    out = _json(post_json, CURVE, {"design": MEANS, "target_power": 0.9,
                                   "range": {"vary": "n_per_group", "from": 5, "to": 60, "points": 12}}, assert_ok)
    single = assert_ok(post_json("/v1/sample-size", {"design": MEANS, "target_power": 0.9}))
    assert out["smallest_size"] == {"n_per_group": single["smallest_group"], "group_sizes": single["group_sizes"],
                                    "n_total": single["n_total"], "achieved_power": single["achieved_power"]}
    # README tour: 27 per group for 90 % power (the service's own computation).
    assert out["smallest_size"]["n_per_group"] == 27
    assert len(out["points"]) == 12 and out["points"][0]["n_per_group"] == 5 and out["points"][-1]["n_per_group"] == 60


def test_unequal_allocation_curve(post_json, assert_ok):
    """With an allocation the points carry the unequal sizes, as /v1/power gives them."""
    design = {"type": "one_way_anova", "cohens_f": 0.3, "groups": 3, "allocation": [1, 2, 2]}
    out = _json(post_json, CURVE, {"design": design, "range": {"vary": "n_per_group", "from": 3, "to": 9}}, assert_ok)
    for point in out["points"]:
        single = assert_ok(post_json("/v1/power", {"design": design, "n_per_group": point["n_per_group"]}))
        assert (point["power"], point["group_sizes"]) == (single["power"], single["group_sizes"])
    assert out["points"][0]["group_sizes"] == [3, 6, 6]
    assert "smallest group" in out["x_label"]


def test_effect_curve_scalar_effect_points_equal_single_calls(post_json, assert_ok):
    """Varying Cohen's f: each point is /v1/power with that f; the stated design is marked."""
    out = _json(post_json, CURVE, {"design": F_DESIGN, "n_per_group": 30, "target_power": 0.8,
                                   "range": {"vary": "effect", "from": 0.1, "to": 0.5, "points": 9}}, assert_ok)
    assert out["effect_field"] == "cohens_f" and out["effect_scaled"] is False
    for point in out["points"]:
        design = dict(F_DESIGN, cohens_f=point["effect"])
        assert point["power"] == assert_ok(post_json("/v1/power", {"design": design, "n_per_group": 30}))["power"]
    stated = assert_ok(post_json("/v1/power", {"design": F_DESIGN, "n_per_group": 30}))
    assert out["stated"] == {"effect": 0.25, "power": stated["power"]}
    single = assert_ok(post_json("/v1/sample-size", {"design": F_DESIGN, "target_power": 0.8}))
    assert out["smallest_size"]["n_per_group"] == single["smallest_group"] == 45  # Cohen (1988) Table 8.4.4, k = 4, f = .25: 45 (from memory)


def test_effect_curve_scaled_means_points_equal_single_calls(post_json, assert_ok):
    """Varying a means effect scales the differences: each point is /v1/power with the scaled means."""
    out = _json(post_json, CURVE, {"design": MEANS, "n_per_group": 12,
                                   "range": {"vary": "effect", "from": 0.5, "to": 1.5, "points": 5}}, assert_ok)
    assert out["effect_scaled"] is True and out["effect_field"] == "group_means"
    centre = sum(MEANS["group_means"]) / 3
    for point in out["points"]:
        s = point["effect"]
        means = MEANS["group_means"] if s == 1.0 else [centre + s * (m - centre) for m in MEANS["group_means"]]
        single = assert_ok(post_json("/v1/power", {"design": dict(MEANS, group_means=means), "n_per_group": 12}))
        assert point["power"] == single["power"]
    middle = out["points"][2]
    assert middle["effect"] == 1.0 and middle["power"] == out["stated"]["power"]


def test_grid_cells_equal_single_calls_and_smallest_sizes(post_json, assert_ok):
    """Each grid cell is /v1/power at (size, effect); each effect's smallest size is /v1/sample-size."""
    body = {"design": F_DESIGN, "sizes": [10, 25, 40], "effects": [0.2, 0.25, 0.4], "target_power": 0.8}
    out = _json(post_json, GRID, body, assert_ok)
    assert out["stated_effect"] == 0.25
    for i, n in enumerate(body["sizes"]):
        for j, f in enumerate(body["effects"]):
            single = assert_ok(post_json("/v1/power", {"design": dict(F_DESIGN, cohens_f=f), "n_per_group": n}))
            assert out["power"][i][j] == single["power"] and out["n_total"][i][j] == single["n_total"]
    for entry in out["smallest_sizes"]:
        single = assert_ok(post_json("/v1/sample-size", {"design": dict(F_DESIGN, cohens_f=entry["effect"]),
                                                         "target_power": 0.8}))
        assert entry["n_per_group"] == single["smallest_group"] and entry["achieved_power"] == single["achieved_power"]


def test_grid_with_zero_effect_reports_its_problem(post_json, assert_ok):
    """An effect no size can detect gets its own problem in smallest_sizes; the table is still given."""
    out = _json(post_json, GRID, {"design": F_DESIGN, "sizes": [10], "effects": [0.0, 0.3], "target_power": 0.8},
                assert_ok)
    zero, some = out["smallest_sizes"]
    assert zero["n_per_group"] is None and zero["problem"]["status"] == 422
    assert some["n_per_group"] > 0
    assert out["power"][0][0] == 0.05  # power equals alpha at zero effect (definition)


def _svg_text(data: bytes) -> tuple[ET.Element, str]:
    root = ET.fromstring(data)
    text = " ".join(t for el in root.iter() for t in (el.text or "",) if t.strip())
    return root, text


def test_curve_svg_is_xml_with_axis_titles(post_json):
    """Accept: image/svg+xml gives an SVG document whose text holds both axis titles and the target."""
    response = post_json(CURVE, {"design": MEANS, "target_power": 0.9, "range": {"vary": "n_per_group", "from": 5, "to": 40}},
                         headers={"Accept": "image/svg+xml"})
    assert response.status_code == 200 and response.mimetype == "image/svg+xml"
    assert response.headers["Vary"] == "Accept"
    root, text = _svg_text(response.data)
    assert root.tag == f"{SVG_NS}svg"
    assert SIZE_LABEL in text and POWER_LABEL in text
    assert "target power 0.9" in text and "n = 27 per group" in text


def test_curve_png_has_the_png_signature(post_json):
    """Accept: image/png gives a PNG (its 8-byte signature) of a sensible size."""
    response = post_json(CURVE, {"design": F_DESIGN, "n_per_group": 20, "range": {"vary": "effect", "from": 0.1, "to": 0.6}},
                         headers={"Accept": "image/png"})
    assert response.status_code == 200 and response.mimetype == "image/png"
    assert response.data[:8] == PNG_SIGNATURE
    assert 10_000 < len(response.data) < 1_000_000


def test_grid_chart_svg_and_png(post_json):
    """The grid chart comes as SVG (with the series title) and as PNG."""
    body = {"design": F_DESIGN, "sizes": [10, 20, 30, 40], "effects": [0.15, 0.25, 0.35], "target_power": 0.8}
    svg = post_json(GRID, body, headers={"Accept": "image/svg+xml"})
    root, text = _svg_text(svg.data)
    assert root.tag == f"{SVG_NS}svg" and "Cohen's f" in text and "0.25 (as planned)" in text
    png = post_json(GRID, body, headers={"Accept": "image/png"})
    assert png.data[:8] == PNG_SIGNATURE


def test_json_is_the_default_and_unknown_accept_is_406(post_json, assert_problem):
    """Without Accept, or with */*, JSON; with only text/csv, a 406 problem."""
    body = {"design": F_DESIGN, "range": {"vary": "n_per_group", "from": 5, "to": 8}}
    assert post_json(CURVE, body).mimetype == "application/json"
    assert post_json(CURVE, body, headers={"Accept": "*/*"}).mimetype == "application/json"
    assert post_json(CURVE, body, headers={"Accept": "text/html,image/svg+xml;q=0.9"}).mimetype == "image/svg+xml"
    assert_problem(post_json(CURVE, body, headers={"Accept": "text/csv"}), 406)


@pytest.mark.parametrize("body, field", [
    ({"design": F_DESIGN, "range": {"vary": "n_per_group", "from": 10, "to": 5}}, "range.to"),
    ({"design": F_DESIGN, "range": {"vary": "n_per_group", "from": 2.5, "to": 9}}, "range.from"),
    ({"design": F_DESIGN, "range": {"vary": "n_per_group", "from": 0, "to": 9}}, "range.from"),
    ({"design": F_DESIGN, "range": {"vary": "n_per_group", "from": 1, "to": 5, "points": 500}}, "range.points"),
    ({"design": F_DESIGN, "range": {"vary": "size", "from": 1, "to": 5}}, "range.vary"),
    ({"design": F_DESIGN, "n_per_group": 5, "range": {"vary": "n_per_group", "from": 2, "to": 5}}, "n_per_group"),
    ({"design": F_DESIGN, "range": {"vary": "effect", "from": 0.1, "to": 0.5}}, "n_per_group"),
    ({"design": F_DESIGN, "target_power": 0.01, "range": {"vary": "n_per_group", "from": 2, "to": 5}}, "target_power"),
    ({"design": MEANS, "n_per_group": 5, "range": {"vary": "effect", "from": 0.5, "to": 500}}, "range.from"),
    ({"design": F_DESIGN, "n_per_group": 5, "range": {"vary": "effect", "from": 0.1, "to": 20}}, "range"),
])
def test_curve_request_errors(post_json, assert_problem, body, field):
    """Impossible ranges and misplaced sizes are 422 problems naming the field."""
    assert_problem(post_json(CURVE, body), 422, field)


def test_point_that_cannot_be_computed_names_the_point(post_json, assert_problem):
    """A size below the design's minimum is a 422 saying which point failed and why."""
    problem = assert_problem(post_json(CURVE, {"design": F_DESIGN, "range": {"vary": "n_per_group", "from": 1, "to": 5}}),
                             422, "range")
    assert "n_per_group = 1" in problem["detail"]


def test_curve_provenance_digest_identifies_the_request(post_json, assert_ok):
    """The curve's digest is the same for the same request and changes with the range."""
    body = {"design": F_DESIGN, "range": {"vary": "n_per_group", "from": 5, "to": 9}}
    a = assert_ok(post_json(CURVE, body))["provenance"]["request_digest"]
    b = assert_ok(post_json(CURVE, json.loads(json.dumps(body))))["provenance"]["request_digest"]
    c = assert_ok(post_json(CURVE, dict(body, range={"vary": "n_per_group", "from": 5, "to": 10})))["provenance"]["request_digest"]
    assert a == b != c
