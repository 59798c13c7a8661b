#!/usr/bin/env node
// A study-registration portal's back end sizing a submitted study with samplewright.
//
// Invented scenario (demo data, not from a real study): a food-packaging lab registers a
// comparison of the seal strength of laminate films from two suppliers. It expects the films
// to differ by 0.8 N/15 mm with an SD of 1.1 N/15 mm, wants 90 % power at alpha = 0.05 and
// expects to lose 10 % of the pouches to handling.
//
// The portal turns the submitted form into a POST /v1/report request (operation
// "sample-size", format "html"): one call gives the numbers (`result`, exactly the
// /v1/sample-size answer) and the justification the portal shows on the registration page
// (an HTML fragment in which the service has escaped every piece of text). It stores the
// record it prints here, request digest included, so a reviewer can recompute the answer.
//
//   SAMPLEWRIGHT_URL=http://127.0.0.1:8000 node examples/javascript/portal-backend.mjs [registration.json]
//
// Node 18+ (built-in fetch), no packages. Without an argument the built-in registration below
// is used; with one, that JSON file (same fields). Prints the stored record as JSON. Exit
// status 0 when the call succeeded, 1 when it failed (the problem details, or why the service
// could not be reached, on stderr).

import { readFile } from "node:fs/promises";
import { randomUUID } from "node:crypto";
import { pathToFileURL } from "node:url";

const BASE_URL = (process.env.SAMPLEWRIGHT_URL || "http://127.0.0.1:8000").replace(/\/+$/, "");
const TIMEOUT_MS = 30_000;

// What the registration form submitted (invented).
const SUBMITTED = {
  registration_id: "PKG-2041",
  title: "Seal strength of laminate films from two suppliers (invented scenario)",
  groups: ["supplier A film", "supplier B film"],
  expected_difference: 0.8, // N/15 mm, supplier A minus supplier B (the API: group 1 minus group 2)
  sd: 1.1, // N/15 mm, pouch to pouch
  alpha: 0.05,
  target_power: 0.9,
  dropout_rate: 0.1,
};

export class SamplewrightError extends Error {
  constructor(message, { status = null, problem = null } = {}) {
    super(message);
    this.name = "SamplewrightError";
    this.status = status;
    this.problem = problem;
  }
}

/** POST a JSON body to samplewright; the parsed answer, or a SamplewrightError. */
export async function callSamplewright(path, body, { baseUrl = BASE_URL, requestId = randomUUID() } = {}) {
  let response;
  try {
    response = await fetch(baseUrl + path, {
      method: "POST",
      headers: { "Content-Type": "application/json", Accept: "application/json", "X-Request-ID": requestId },
      body: JSON.stringify(body),
      signal: AbortSignal.timeout(TIMEOUT_MS),
    });
  } catch (err) {
    throw new SamplewrightError(`cannot reach samplewright at ${baseUrl}: ${err.cause?.message || err.message}`);
  }
  const text = await response.text();
  if (!response.ok) {
    let problem = null;
    try {
      problem = JSON.parse(text);
    } catch {
      // not problem+json (a proxy in between?): report the raw text
    }
    const fields = Object.entries(problem?.errors || {}).map(([field, msgs]) => `\n  ${field}: ${msgs.join("; ")}`);
    const what = problem ? `${problem.title}: ${problem.detail}${fields.join("")}` : text.slice(0, 300);
    throw new SamplewrightError(`HTTP ${response.status} ${what}\n  request id: ${requestId}`,
      { status: response.status, problem });
  }
  return JSON.parse(text);
}

/** The /v1/sample-size request for a submitted registration. */
export function sampleSizeRequest(reg) {
  return {
    alpha: reg.alpha,
    target_power: reg.target_power,
    dropout_rate: reg.dropout_rate,
    design: { type: "two_sample_t", mean_difference: reg.expected_difference, sd: reg.sd },
  };
}

/** Size a registration: the record the portal stores. */
export async function sizeRegistration(reg, options = {}) {
  const request = sampleSizeRequest(reg);
  const report = await callSamplewright("/v1/report", { operation: "sample-size", format: "html", request }, options);
  const r = report.result;
  return {
    registration_id: reg.registration_id,
    title: reg.title,
    groups: reg.groups,
    n_per_group: r.n_per_group,
    n_total: r.n_total,
    achieved_power: r.achieved_power,
    target_power: r.target_power,
    one_step_smaller_power: r.one_step_smaller.power,
    enrol_per_group: r.enrolment ? r.enrolment.group_sizes : r.group_sizes,
    enrol_total: r.enrolment ? r.enrolment.n_total : r.n_total,
    warnings: r.warnings,
    request_digest: report.provenance.request_digest,
    service_version: report.provenance.service_version,
    method_reference: report.provenance.method_reference,
    justification_html: report.text,
  };
}

async function main(argv) {
  const registration = argv[0] ? JSON.parse(await readFile(argv[0], "utf8")) : SUBMITTED;
  const record = await sizeRegistration(registration);
  process.stdout.write(JSON.stringify(record, null, 2) + "\n");
}

// Run as a script (not when imported by another module of the portal).
if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
  main(process.argv.slice(2)).catch((err) => {
    process.stderr.write(`samplewright call failed: ${err.message}\n`);
    process.exit(1);
  });
}
