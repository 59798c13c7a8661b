"""Protocol text (``POST /v1/report``): a justification a planner can paste into a protocol.

The text is written from one computation (power, sample size or detectable effect), run
by the same engine as the single endpoint, and says: the design; every assumption with
its value; the method and its published reference; the result; the dropout adjustment;
the software version and the request digest; the warnings and the cautions. Numbers are
those of the computation: whole numbers as computed; probabilities with as many decimals
as it takes for the text not to round across the target (0.89997 is never written 0.9000
next to a target of 0.9); other quantities to six significant digits.

Three formats from one document model: Markdown, plain text (wrapped at 78 columns),
and an HTML fragment in which every piece of text is escaped.
"""

from __future__ import annotations

import html
import re
import textwrap
from typing import Any

from marshmallow import ValidationError, fields

from .batch import CORE_ERRORS, OPERATIONS, answer_many, as_problem
from .designs import ADAPTERS, SCHEMAS
from .fields import StrictSchema, choice
from .problems import Problem, validation_problem
from .schemas import ProvenanceSchema

FORMATS = {"markdown": "text/markdown", "text": "text/plain", "html": "text/html"}


class ReportRequestSchema(StrictSchema):
    """Which computation to justify, and in which format."""

    operation = choice(list(OPERATIONS), required=True,
                       metadata={"description": "The computation the text justifies."})
    request = fields.Dict(required=True, metadata={"description": "The body of that single endpoint."})
    format = choice(list(FORMATS), load_default="markdown",
                    metadata={"description": "`markdown` (default), `text` or `html` (an escaped fragment).",
                              "default": "markdown"})


class ReportResponseSchema(StrictSchema):
    format = fields.String(required=True, metadata={"enum": list(FORMATS)})
    media_type = fields.String(required=True, metadata={"description": "Media type of `text`."})
    title = fields.String(required=True)
    text = fields.String(required=True, metadata={"description": "The justification, ready to paste."})
    operation = fields.String(required=True, metadata={"enum": list(OPERATIONS)})
    result = fields.Dict(required=True, metadata={"description": "The computation's response, as the single endpoint gives it."})
    provenance = fields.Nested(ProvenanceSchema, required=True,
                               metadata={"description": "The computation's provenance (its request digest)."})


REPORT_REQUEST = ReportRequestSchema()


# -- numbers -----------------------------------------------------------------------------------


def probability(x: float, reference: float | None = None) -> str:
    """A probability with 4 decimals, more if fewer would round across ``reference``."""
    for digits in range(4, 13):
        text = f"{x:.{digits}f}"
        shown = float(text)
        if reference is None or (shown < reference) == (x < reference):
            return text
    return repr(x)


def number(x: float) -> str:
    """Six significant digits, no exponent for ordinary magnitudes."""
    if x == 0:
        return "0"
    return f"{x:.6g}"


def _value(v: Any) -> str:
    if isinstance(v, bool):
        return "yes" if v else "no"
    if isinstance(v, float):
        return f"{v:g}" if abs(v) >= 1e-4 or v == 0 else repr(v)
    if isinstance(v, list):
        return ", ".join(_value(x) for x in v) if not any(isinstance(x, list) for x in v) else \
            "; ".join("(" + _value(x) + ")" for x in v)
    return str(v)


def _sizes(sizes: list[int]) -> str:
    if len(set(sizes)) == 1:
        return f"{sizes[0]} in each of the {len(sizes)} groups" if len(sizes) > 1 else f"{sizes[0]}"
    return "group sizes " + ", ".join(str(n) for n in sizes)


def _percent(d: float) -> str:
    return f"{100 * d:g} %"


# -- the document ----------------------------------------------------------------------------------

# A document is a list of blocks: ("h1" | "h2", text), ("p", text), ("ul", [text]),
# ("table", [(name, value, meaning)]), ("code", text).


def _field_meaning(schema, name: str) -> str:
    field = schema.fields.get(name)
    text = (field.metadata.get("description") if field is not None else None) or ""
    return re.sub(r"`([^`]*)`", r"\1", text)


_REQUEST_FIELDS = {
    "alpha": "Significance level (type I error rate) of the test.",
    "target_power": "Power the design must reach.",
    "dropout_rate": "Expected fraction of units lost before analysis.",
    "n_per_group": "Units per group (the smallest group under an unequal allocation).",
    "group_sizes": "Units in each group.",
}


def _assumptions(operation: str, req: dict, result: dict) -> list[tuple[str, str, str]]:
    design = req["design"]
    schema = SCHEMAS[design["type"]]
    rows = [("design", design["type"], ADAPTERS[design["type"]].title)]
    for name, value in design.items():
        if name != "type":
            rows.append((name, _value(value), _field_meaning(schema, name)))
    for name in ("alpha", "target_power", "dropout_rate", "n_per_group", "group_sizes"):
        if name in req:
            rows.append((name, _value(req[name]), _REQUEST_FIELDS[name]))
    for name, value in (result.get("effect") or {}).items():
        rows.append((f"effect: {name}", number(value) if isinstance(value, float) else _value(value),
                     "The assumed effect in standard terms, at the sizes used."))
    return rows


def _method(adapter, operation: str) -> str:
    how = {
        "sample-size": "The sample size is the smallest whole number of units per group (in the smallest "
                       "group, under an unequal allocation) whose exact power reaches the target, found by an "
                       "integer search on the power function itself rather than by a normal approximation.",
        "power": "The power is computed exactly from the distribution of the test statistic under the "
                 "assumed effect.",
        "detectable-effect": "The detectable effect is the effect at which the exact power equals the target "
                             "with the given sizes, found by bracketing and root finding on the power function "
                             "(relative accuracy 1e-13).",
    }[operation]
    return how


def _result_paragraphs(operation: str, result: dict) -> list[tuple]:
    alpha = result["alpha"]
    blocks: list[tuple] = []
    sizes = result["group_sizes"]
    if operation == "sample-size":
        target = result["target_power"]
        n = result["n_per_group"]
        lead = (f"{n} units per group" if n is not None else _sizes(sizes)) + f" ({result['n_total']} in total"
        lead += ")" if n is not None else f"; smallest group {result['smallest_group']})"
        text = (f"The smallest design reaching a power of at least {target:g} at α = {alpha:g} has "
                f"{lead}. Its power is {probability(result['achieved_power'], target)}.")
        step = result.get("one_step_smaller")
        if step is not None:
            text += (f" With one unit fewer in the smallest group ({_sizes(step['group_sizes'])}, "
                     f"{step['n_total']} in total) the power would be {probability(step['power'], target)}, "
                     "short of the target, so no smaller design of this allocation suffices.")
        blocks.append(("p", text))
    elif operation == "power":
        blocks.append(("p", f"With {_sizes(sizes)} ({result['n_total']} units in total), the probability that "
                            f"the test at α = {alpha:g} gives a significant result, if the assumed effect is the "
                            f"true one, is {probability(result['power'])}."))
    else:
        target = result["target_power"]
        common = _COMMON_KEYS
        natural = [(k, v) for k, v in result.items() if k not in common and isinstance(v, int | float)
                   and not isinstance(v, bool)]
        listed = ", ".join(f"{k.replace('_', ' ')} = {number(float(v))}" for k, v in natural)
        blocks.append(("p", f"With {_sizes(sizes)} ({result['n_total']} units in total), the smallest effect the "
                            f"test at α = {alpha:g} detects with power {target:g} is: {listed}. "
                            "Smaller true effects are detected with lower power."))
    blocks.append(("p", f"Test details: {number(result['df_numerator'])} and {number(result['df_denominator'])} "
                        f"degrees of freedom, noncentrality {number(result['noncentrality'])}, critical value "
                        f"{number(result['critical_value'])} at α = {alpha:g}."))
    return blocks


_COMMON_KEYS = frozenset((
    "alpha", "design_type", "df_numerator", "df_denominator", "noncentrality", "critical_value",
    "group_sizes", "n_total", "method", "assumptions", "warnings", "cautions", "details", "provenance",
    "target_power", "achieved_power", "power", "effect",
))


def _dropout(operation: str, result: dict) -> str:
    if operation == "sample-size":
        enrol = result.get("enrolment")
        if enrol is not None:
            d = enrol["dropout_rate"]
            return (f"With an expected dropout of {_percent(d)}, enrol ceil(n / (1 − {d:g})) units per group: "
                    f"{_sizes(enrol['group_sizes'])}, {enrol['n_total']} in total, so that the sizes above "
                    "remain for the analysis. (Adding the dropout rate to n, n·(1 + d), under-enrols.)")
        return ("No dropout was assumed. If units may be lost before analysis, enrol ceil(n / (1 − d)) per "
                "group for an expected dropout rate d, and ask the service again with dropout_rate set.")
    return ("The sizes above are the units analysed. If units may be lost before analysis, enrol "
            "ceil(n / (1 − d)) per group for an expected dropout rate d.")


TITLES = {
    "sample-size": "Sample-size justification",
    "power": "Power of the planned design",
    "detectable-effect": "Smallest detectable effect",
}


def document(operation: str, req: dict, result: dict) -> tuple[str, list[tuple]]:
    adapter = ADAPTERS[result["design_type"]]
    prov = result["provenance"]
    blocks: list[tuple] = [("h1", TITLES[operation])]
    blocks.append(("h2", "Design"))
    blocks.append(("p", f"{adapter.title}, comparing {len(result['group_sizes'])} groups."))
    blocks.append(("h2", "Assumptions and their values"))
    blocks.append(("table", _assumptions(operation, req, result)))
    blocks.append(("p", "The analysis assumes:"))
    blocks.append(("ul", list(result["assumptions"])))
    blocks.append(("h2", "Method"))
    blocks.append(("p", _method(adapter, operation)))
    blocks.append(("code", adapter.formula))
    blocks.append(("p", f"Reference: {result['method']['reference']}. Method identifier: {result['method']['id']}."))
    blocks.append(("h2", "Result"))
    blocks.extend(_result_paragraphs(operation, result))
    blocks.append(("h2", "Dropout"))
    blocks.append(("p", _dropout(operation, result)))
    if result["warnings"]:
        blocks.append(("h2", "Warnings"))
        blocks.append(("ul", list(result["warnings"])))
    blocks.append(("h2", "Cautions"))
    blocks.append(("ul", list(result["cautions"])))
    blocks.append(("h2", "Software and record"))
    blocks.append(("p", f"Computed with samplewright {prov['service_version']} (numpy {prov['numpy_version']}, "
                        f"scipy {prov['scipy_version']}). Request digest (SHA-256 of the canonical request): "
                        f"{prov['request_digest']}. Sending the same request again gives the same digest and, "
                        "with the same versions, the same numbers."))
    return TITLES[operation], blocks


# -- rendering ---------------------------------------------------------------------------------------

_MD_SPECIAL = re.compile(r"([\\`*_\[\]<>#|~])")


def _md(text: str) -> str:
    return _MD_SPECIAL.sub(r"\\\1", text)


def to_markdown(blocks: list[tuple]) -> str:
    out: list[str] = []
    for kind, content in blocks:
        if kind == "h1":
            out.append(f"# {_md(content)}")
        elif kind == "h2":
            out.append(f"## {_md(content)}")
        elif kind == "p":
            out.append(_md(content))
        elif kind == "code":
            out.append("```\n" + content.replace("```", "'''") + "\n```")
        elif kind == "ul":
            out.append("\n".join(f"- {_md(item)}" for item in content))
        elif kind == "table":
            rows = ["| quantity | value | meaning |", "|---|---|---|"]
            rows += [f"| {_md(a)} | {_md(b)} | {_md(c)} |" for a, b, c in content]
            out.append("\n".join(rows))
    return "\n\n".join(out) + "\n"


def to_text(blocks: list[tuple], width: int = 78) -> str:
    out: list[str] = []
    for kind, content in blocks:
        if kind == "h1":
            out.append(f"{content}\n{'=' * len(content)}")
        elif kind == "h2":
            out.append(f"{content}\n{'-' * len(content)}")
        elif kind == "p":
            out.append(textwrap.fill(content, width))
        elif kind == "code":
            out.append(textwrap.indent(textwrap.fill(content, width - 4), "    "))
        elif kind == "ul":
            out.append("\n".join(textwrap.fill(item, width, initial_indent="  - ", subsequent_indent="    ")
                                 for item in content))
        elif kind == "table":
            lines = []
            for name, value, meaning in content:
                lines.append(textwrap.fill(f"{name}: {value}", width, subsequent_indent="    "))
                if meaning:
                    lines.append(textwrap.fill(meaning, width, initial_indent="    ", subsequent_indent="    "))
            out.append("\n".join(lines))
    return "\n\n".join(out) + "\n"


def to_html(blocks: list[tuple]) -> str:
    e = html.escape
    out: list[str] = ['<article class="samplewright-report">']
    for kind, content in blocks:
        if kind == "h1":
            out.append(f"<h1>{e(content)}</h1>")
        elif kind == "h2":
            out.append(f"<h2>{e(content)}</h2>")
        elif kind == "p":
            out.append(f"<p>{e(content)}</p>")
        elif kind == "code":
            out.append(f"<pre><code>{e(content)}</code></pre>")
        elif kind == "ul":
            out.append("<ul>" + "".join(f"<li>{e(item)}</li>" for item in content) + "</ul>")
        elif kind == "table":
            rows = "".join(f"<tr><th scope=\"row\">{e(a)}</th><td>{e(b)}</td><td>{e(c)}</td></tr>"
                           for a, b, c in content)
            out.append("<table><thead><tr><th scope=\"col\">quantity</th><th scope=\"col\">value</th>"
                       f"<th scope=\"col\">meaning</th></tr></thead><tbody>{rows}</tbody></table>")
    out.append("</article>")
    return "\n".join(out) + "\n"


_RENDER = {"markdown": to_markdown, "text": to_text, "html": to_html}


def _inner_problem(error: Exception) -> Problem:
    """The computation's problem, with its field names placed under ``request``."""
    problem = as_problem(error)
    errors = {f"request.{key}" if key != "body" else "request": msgs for key, msgs in (problem.errors or {}).items()}
    return Problem(problem.status, problem.slug, problem.title, problem.detail, errors=errors or None)


def report(body: dict) -> dict:
    """POST /v1/report."""
    try:
        req = REPORT_REQUEST.load(body)
    except ValidationError as exc:
        raise validation_problem(exc.messages) from None
    (item,) = answer_many(req["operation"], [req["request"]], isolate=False)
    if item.error is not None:
        if isinstance(item.error, (Problem, *CORE_ERRORS)):
            raise _inner_problem(item.error)
        raise item.error
    title, blocks = document(req["operation"], item.req, item.result)
    return {
        "format": req["format"],
        "media_type": FORMATS[req["format"]],
        "title": title,
        "text": _RENDER[req["format"]](blocks),
        "operation": req["operation"],
        "result": item.result,
        "provenance": item.result["provenance"],
    }
