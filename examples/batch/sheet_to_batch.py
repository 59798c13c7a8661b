#!/usr/bin/env python3
"""A lab's planning sheet (CSV) -> one POST /v1/batch -> a CSV of answers for a LIMS import.

Invented scenarios (demo data, not from real studies): planning-sheet.csv holds studies of a
food lab comparing drying methods, a materials lab comparing curing times, a coatings lab and
a ceramics lab; one row (CR-402) holds a deliberate mistake to show a failed row.

The sheet: one study per row.

- ``id`` (required, 1-200 characters) is echoed back, so the answers join to the sheet;
- ``operation``: ``sample-size``, ``power`` or ``detectable-effect``;
- ``design``: the design type (``one_way_anova``, ``two_sample_t``, ``paired_t``,
  ``welch_anova``, ...; GET /v1/designs lists them and their fields);
- ``alpha``, ``target_power``, ``dropout_rate``, ``n_per_group``, ``group_sizes``: the request's
  own fields;
- every other column except ``lab``, ``study`` and ``notes`` is a field of ``design``
  (``group_means``, ``sd``, ``group_sds``, ``mean_difference``, ``correlation``, ``groups``, ...);
- an empty cell leaves the field out; lists are written with ``;`` (``61;64;66``); numbers
  without a decimal point are sent as integers.

The answers: one row per sheet row, in the same order: ``id``, ``status`` (200, or the HTTP
status the single endpoint would have answered), ``operation``, ``design``, ``n_per_group``,
``group_sizes``, ``n_total``, ``enrol_group_sizes`` and ``enrol_n_total`` (sample size with
dropout), ``power`` (the power of the design: achieved power for sample-size and
detectable-effect), ``effect_measure`` and ``effect_size`` (the standardised effect: the assumed
one for power and sample-size, the detectable one for detectable-effect), ``difference`` (the
same effect in the units of the data, when the design gives it), ``request_digest`` and
``error`` (the problem's detail and field messages when the row failed). Numbers are the
service's, at full precision.

    SAMPLEWRIGHT_URL=http://127.0.0.1:8000 python3 examples/batch/sheet_to_batch.py \\
        examples/batch/planning-sheet.csv --out answers.csv

Exit status 0 when the batch call succeeded (failed rows are data: status and error columns;
a count goes to stderr), 1 when the call itself failed or the sheet could not be read.
Standard library only.
"""

from __future__ import annotations

import argparse
import csv
import json
import os
import re
import sys
import urllib.error
import urllib.request
from pathlib import Path

BASE_URL = os.environ.get("SAMPLEWRIGHT_URL", "http://127.0.0.1:8000").rstrip("/")
TIMEOUT_SECONDS = 60
DEFAULT_SHEET = Path(__file__).with_name("planning-sheet.csv")

REQUEST_FIELDS = ("alpha", "target_power", "dropout_rate", "n_per_group", "group_sizes")
NOT_SENT = ("id", "operation", "design", "lab", "study", "notes")
LIST_FIELDS = ("group_means", "group_sds", "group_sizes", "allocation", "coefficients", "level_means")

#: Which number of an answer is "the" effect, by preference.
EFFECT_MEASURES = ("cohens_f", "cohens_d", "cohens_dz", "cohens_f_equivalent", "standardised_contrast",
                   "variance_ratio")
DIFFERENCES = ("mean_difference", "min_range", "range_of_means", "contrast_value")

ANSWER_COLUMNS = ("id", "status", "operation", "design", "n_per_group", "group_sizes", "n_total",
                  "enrol_group_sizes", "enrol_n_total", "power", "effect_measure", "effect_size",
                  "difference", "request_digest", "error")

_INTEGER = re.compile(r"^[+-]?\d+$")


class SheetError(Exception):
    """The sheet cannot be turned into a request."""


def number(text: str):
    """A cell as a JSON number (int without a decimal point); other text stays text."""
    text = text.strip()
    if _INTEGER.match(text):
        return int(text)
    try:
        return float(text)
    except ValueError:
        return text


def cell(name: str, text: str):
    if name in LIST_FIELDS or ";" in text:
        return [number(part) for part in text.split(";") if part.strip()]
    return number(text)


def batch_request(rows: list[dict]) -> dict:
    """The POST /v1/batch body for the sheet's rows."""
    items = []
    for line, row in enumerate(rows, start=2):
        if not (row.get("id") or "").strip():
            raise SheetError(f"line {line}: the id cell is empty")
        request: dict = {}
        design: dict = {"type": (row.get("design") or "").strip()}
        for name, text in row.items():
            if name is None:
                raise SheetError(f"line {line}: more cells than columns")
            if name in NOT_SENT or text is None or not text.strip():
                continue
            (request if name in REQUEST_FIELDS else design)[name] = cell(name, text)
        request["design"] = design
        items.append({"id": row["id"].strip(), "operation": (row.get("operation") or "").strip(),
                      "request": request})
    if not items:
        raise SheetError("the sheet has no rows")
    return {"items": items}


def post(path: str, body: dict) -> dict:
    request = urllib.request.Request(BASE_URL + path, data=json.dumps(body).encode("utf-8"), method="POST",
                                     headers={"Content-Type": "application/json", "Accept": "application/json"})
    try:
        with urllib.request.urlopen(request, timeout=TIMEOUT_SECONDS) as response:
            return json.loads(response.read())
    except urllib.error.HTTPError as exc:
        raw = exc.read()
        try:
            problem = json.loads(raw)
            detail = f"{problem.get('title')}: {problem.get('detail')}" + "".join(
                f"\n  {field}: {'; '.join(msgs)}" for field, msgs in (problem.get("errors") or {}).items())
        except ValueError:
            detail = raw[:300].decode("utf-8", "replace")
        raise SheetError(f"HTTP {exc.code} {detail}") from None
    except (urllib.error.URLError, OSError) as exc:
        raise SheetError(f"cannot reach samplewright at {BASE_URL}: {getattr(exc, 'reason', exc)}") from None


def _join(values) -> str:
    return ";".join(str(v) for v in values) if values else ""


def _first(source: dict, names: tuple) -> tuple[str, object]:
    for name in names:
        if isinstance(source.get(name), int | float):
            return name, source[name]
    return "", ""


def answer_row(item: dict, operation: str, design: str) -> dict:
    """One row of the answers CSV from one batch item."""
    row = dict.fromkeys(ANSWER_COLUMNS, "")
    row.update(id=item["id"], status=item["status"], operation=operation, design=design)
    if item["status"] != 200:
        problem = item["problem"]
        fields = "; ".join(f"{field}: {' '.join(msgs)}" for field, msgs in (problem.get("errors") or {}).items())
        row["error"] = f"{problem['title']}: {problem['detail']}" + (f" ({fields})" if fields else "")
        return row
    result = item["result"]
    sizes = result["group_sizes"]
    row.update(group_sizes=_join(sizes), n_total=result["n_total"],
               request_digest=result["provenance"]["request_digest"])
    row["n_per_group"] = result.get("n_per_group") or (sizes[0] if len(set(sizes)) == 1 else "")
    if result.get("enrolment"):
        row["enrol_group_sizes"] = _join(result["enrolment"]["group_sizes"])
        row["enrol_n_total"] = result["enrolment"]["n_total"]
    row["power"] = result["power"] if "power" in result else result["achieved_power"]
    effect = result if operation == "detectable-effect" else (result.get("effect") or {})
    row["effect_measure"], row["effect_size"] = _first(effect, EFFECT_MEASURES)
    row["difference"] = _first(effect, DIFFERENCES)[1]
    return row


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("sheet", nargs="?", default=str(DEFAULT_SHEET), help="the planning sheet (default: %(default)s)")
    parser.add_argument("--out", help="where to write the answers CSV (default: standard output)")
    parser.add_argument("--save-request", metavar="PATH", help="also save the batch request body (JSON) here")
    args = parser.parse_args(argv)
    try:
        with open(args.sheet, newline="", encoding="utf-8") as handle:
            rows = list(csv.DictReader(handle))
        body = batch_request(rows)
        if args.save_request:
            Path(args.save_request).write_text(json.dumps(body, indent=2) + "\n", encoding="utf-8")
        answer = post("/v1/batch", body)
    except (SheetError, OSError) as exc:
        print(f"samplewright batch failed: {exc}", file=sys.stderr)
        return 1
    out = open(args.out, "w", newline="", encoding="utf-8") if args.out else sys.stdout
    try:
        writer = csv.DictWriter(out, fieldnames=ANSWER_COLUMNS, lineterminator="\n")
        writer.writeheader()
        for sent, item in zip(body["items"], answer["items"], strict=True):
            writer.writerow(answer_row(item, sent["operation"], sent["request"]["design"]["type"]))
    finally:
        if out is not sys.stdout:
            out.close()
    summary = answer["summary"]
    print(f"{summary['succeeded']} rows answered, {summary['failed']} failed (see the error column)", file=sys.stderr)
    return 0


if __name__ == "__main__":
    sys.exit(main())
