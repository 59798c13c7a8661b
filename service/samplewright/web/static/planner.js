/* samplewright study planner: turns the form into a request to this service's public API
   and shows the answer. Plain JavaScript, no libraries; all text goes in through
   textContent, never as markup. */
"use strict";

(function () {
  const $ = (id) => document.getElementById(id);
  const MIN_GROUPS = 2;
  const MAX_GROUPS = 10;
  /* Invented example (a resin cured for 4, 8 and 12 hours), so the first click shows an answer. */
  const EXAMPLE = {
    names: ["4 h cure", "8 h cure", "12 h cure"],
    means: [61, 64, 66],
    sds: [5, 5, 5],
    costs: [1, 1, 1],
  };
  const FIELD_LABELS = {
    "group-count": "How many groups",
    "sd": "Standard deviation within a group",
    "cohens-f": "Cohen's f",
    "n-per-group": "Units in each group",
    "target-power": "Power wanted",
    "alpha": "Significance level",
    "dropout": "Expected losses",
    "budget": "Budget",
    "min-group": "Fewest units in any group",
  };

  let lastRequest = null; // {operation, body} of the last successful computation

  // -- the groups table -------------------------------------------------------------------

  function groupCount() {
    const k = Number($("group-count").value);
    return Number.isInteger(k) && k >= MIN_GROUPS && k <= MAX_GROUPS ? k : null;
  }

  function cellInput(kind, i, value, labelText, type) {
    const td = document.createElement("td");
    td.className = "col-" + kind;
    const id = kind + "-" + i;
    const label = document.createElement("label");
    label.className = "visually-hidden";
    label.htmlFor = id;
    label.textContent = labelText;
    const input = document.createElement("input");
    input.id = id;
    input.name = id;
    input.type = type;
    if (type === "number") {
      input.step = "any";
      input.inputMode = "decimal";
    } else {
      input.maxLength = 40;
    }
    input.value = value;
    td.append(label, input);
    return td;
  }

  function renderGroups() {
    const k = groupCount();
    clearFieldError("group-count");
    if (k === null) {
      showFieldError("group-count", "Enter a whole number from " + MIN_GROUPS + " to " + MAX_GROUPS + ".");
      return;
    }
    const body = $("group-rows");
    const old = [];
    for (const row of body.rows) {
      old.push({
        name: row.querySelector("[id^=name-]").value,
        mean: row.querySelector("[id^=mean-]").value,
        sd: row.querySelector("[id^=sdg-]").value,
        cost: row.querySelector("[id^=cost-]").value,
      });
    }
    body.textContent = "";
    for (let i = 0; i < k; i++) {
      const prev = old[i] || {};
      const tr = document.createElement("tr");
      const th = document.createElement("th");
      th.scope = "row";
      th.className = "index";
      th.textContent = String(i + 1);
      tr.append(th);
      tr.append(cellInput("name", i, prev.name ?? EXAMPLE.names[i] ?? "Group " + (i + 1), "Name of group " + (i + 1), "text"));
      tr.append(cellInput("mean", i, prev.mean ?? String(EXAMPLE.means[i] ?? ""), "Expected mean of group " + (i + 1), "number"));
      tr.append(cellInput("sdg", i, prev.sd ?? String(EXAMPLE.sds[i] ?? $("sd").value), "Standard deviation of group " + (i + 1), "number"));
      tr.append(cellInput("cost", i, prev.cost ?? String(EXAMPLE.costs[i] ?? 1), "Cost of one unit in group " + (i + 1), "number"));
      body.append(tr);
    }
    syncVisibility();
  }

  function setColumn(kind, shown) {
    for (const cell of document.querySelectorAll(".col-" + kind)) {
      cell.hidden = !shown;
    }
  }

  function radio(name) {
    const checked = document.querySelector('input[name="' + name + '"]:checked');
    return checked ? checked.value : null;
  }

  function syncVisibility() {
    const effect = radio("effect-kind");
    const spread = radio("spread-kind");
    const question = radio("question");
    const standardised = effect === "standardised";
    const differs = !standardised && spread === "differs";
    $("spread-choice").hidden = standardised;
    $("f-field").hidden = !standardised || question === "detectable-effect";
    $("sd-field").hidden = standardised || differs;
    setColumn("mean", !standardised && question !== "detectable-effect");
    setColumn("sdg", differs);
    setColumn("cost", question === "allocation");
    $("n-field").hidden = !(question === "power" || question === "detectable-effect");
    $("power-field").hidden = question === "power" || (question === "allocation" && radio("split-goal") === "budget");
    $("dropout-field").hidden = question !== "sample-size";
    $("split-goal").hidden = question !== "allocation";
    $("budget-field").hidden = !(question === "allocation" && radio("split-goal") === "budget");
  }

  // -- errors beside the fields and in a summary --------------------------------------------

  function labelOf(id) {
    if (FIELD_LABELS[id]) return FIELD_LABELS[id];
    const m = /^(name|mean|sdg|cost)-(\d+)$/.exec(id);
    if (m) {
      const what = { name: "Name", mean: "Expected mean", sdg: "Standard deviation", cost: "Cost of one unit" }[m[1]];
      return what + ", " + groupName(Number(m[2]));
    }
    return id;
  }

  function showFieldError(id, message) {
    const input = $(id);
    if (!input) return;
    input.setAttribute("aria-invalid", "true");
    const errId = id + "-error";
    let p = $(errId);
    if (!p) {
      p = document.createElement("p");
      p.id = errId;
      p.className = "field-error";
      input.insertAdjacentElement("afterend", p);
    }
    p.textContent = message;
    const described = (input.getAttribute("aria-describedby") || "").split(" ").filter(Boolean);
    if (!described.includes(errId)) described.unshift(errId);
    input.setAttribute("aria-describedby", described.join(" "));
  }

  function clearFieldError(id) {
    const input = $(id);
    const p = $(id + "-error");
    if (p) p.remove();
    if (input) {
      input.removeAttribute("aria-invalid");
      const described = (input.getAttribute("aria-describedby") || "").split(" ").filter((x) => x && x !== id + "-error");
      if (described.length) input.setAttribute("aria-describedby", described.join(" "));
      else input.removeAttribute("aria-describedby");
    }
  }

  function clearErrors() {
    for (const p of Array.from(document.querySelectorAll(".field-error"))) {
      clearFieldError(p.id.replace(/-error$/, ""));
    }
    $("error-list").textContent = "";
    $("error-summary").hidden = true;
  }

  function showErrors(errors) {
    // errors: [{id: input id or null, message}]
    const list = $("error-list");
    list.textContent = "";
    for (const e of errors) {
      const li = document.createElement("li");
      if (e.id && $(e.id)) {
        showFieldError(e.id, e.message);
        const a = document.createElement("a");
        a.href = "#" + e.id;
        a.textContent = labelOf(e.id) + ": " + e.message;
        a.addEventListener("click", (ev) => {
          ev.preventDefault();
          $(e.id).focus();
        });
        li.append(a);
      } else {
        li.textContent = e.message;
      }
      list.append(li);
    }
    $("error-summary").hidden = false;
    $("error-summary").focus();
  }

  /* Map the API's field paths (problem+json `errors`) onto the inputs of this form. */
  function inputFor(path) {
    const parts = path.split(".");
    const index = parts.length > 2 ? Number(parts[2]) : parts.length > 1 && /^\d+$/.test(parts[1]) ? Number(parts[1]) : 0;
    if (path.startsWith("design.group_means")) return "mean-" + index;
    if (path.startsWith("design.group_sds")) return "sdg-" + index;
    if (path === "design.sd") return "sd";
    if (path === "design.cohens_f") return "cohens-f";
    if (path === "design.groups") return "group-count";
    if (path.startsWith("costs")) return "cost-" + (parts.length > 1 ? Number(parts[1]) : 0);
    return { target_power: "target-power", alpha: "alpha", dropout_rate: "dropout", n_per_group: "n-per-group", budget: "budget", min_group_size: "min-group" }[path] || null;
  }

  // -- reading the form --------------------------------------------------------------------

  function groupName(i) {
    const input = $("name-" + i);
    const name = input ? input.value.trim() : "";
    return name || "group " + (i + 1);
  }

  function unitWord() {
    return $("unit-word").value.trim() || "units";
  }

  function measureUnit() {
    const u = $("measure-unit").value.trim();
    return u ? " " + u : "";
  }

  function readNumber(id, errors, scale) {
    const raw = $(id).value.trim();
    const value = Number(raw);
    if (raw === "" || !Number.isFinite(value)) {
      errors.push({ id: id, message: "enter a number" });
      return null;
    }
    return scale ? value * scale : value;
  }

  function readInteger(id, errors) {
    const value = readNumber(id, errors);
    if (value !== null && !Number.isInteger(value)) {
      errors.push({ id: id, message: "enter a whole number" });
      return null;
    }
    return value;
  }

  function buildDesign(question, k, errors) {
    const standardised = radio("effect-kind") === "standardised";
    const differs = !standardised && radio("spread-kind") === "differs";
    const column = (kind) => Array.from({ length: k }, (_, i) => readNumber(kind + "-" + i, errors));
    if (question === "detectable-effect") {
      if (standardised) return { type: "one_way_anova", groups: k };
      if (differs) return { type: "welch_anova", group_sds: column("sdg") };
      return { type: "one_way_anova", groups: k, sd: readNumber("sd", errors) };
    }
    if (standardised) return { type: "one_way_anova", groups: k, cohens_f: readNumber("cohens-f", errors) };
    if (differs) return { type: "welch_anova", group_means: column("mean"), group_sds: column("sdg") };
    return { type: "one_way_anova", group_means: column("mean"), sd: readNumber("sd", errors) };
  }

  function buildRequest() {
    const errors = [];
    const k = groupCount();
    if (k === null) {
      errors.push({ id: "group-count", message: "enter a whole number from " + MIN_GROUPS + " to " + MAX_GROUPS });
      return { errors };
    }
    const question = radio("question");
    const body = { design: buildDesign(question, k, errors), alpha: readNumber("alpha", errors) };
    if (question === "sample-size") {
      body.target_power = readNumber("target-power", errors, 0.01);
      body.dropout_rate = readNumber("dropout", errors, 0.01);
    } else if (question === "power") {
      body.n_per_group = readInteger("n-per-group", errors);
    } else if (question === "detectable-effect") {
      body.n_per_group = readInteger("n-per-group", errors);
      body.target_power = readNumber("target-power", errors, 0.01);
    } else {
      body.costs = Array.from({ length: k }, (_, i) => readNumber("cost-" + i, errors));
      body.min_group_size = readInteger("min-group", errors);
      if (radio("split-goal") === "budget") body.budget = readNumber("budget", errors);
      else body.target_power = readNumber("target-power", errors, 0.01);
    }
    for (const key of ["target_power", "dropout_rate"]) {
      // 90 % read as 0.9 exactly, not 0.9000000000000001.
      if (typeof body[key] === "number") body[key] = Number(body[key].toPrecision(12));
    }
    return { question, body, errors, k };
  }

  // -- talking to the API -------------------------------------------------------------------

  async function call(path, body, accept) {
    const headers = { "Content-Type": "application/json", Accept: accept || "application/json" };
    const key = $("api-key").value.trim();
    if (key) headers["X-API-Key"] = key;
    let response;
    try {
      response = await fetch(path, { method: "POST", headers, body: JSON.stringify(body) });
    } catch (err) {
      return { ok: false, status: 0, data: { detail: "the service could not be reached (" + err.message + ")" } };
    }
    const type = response.headers.get("Content-Type") || "";
    let data = null;
    if (type.includes("json")) {
      try {
        data = await response.json();
      } catch (err) {
        data = null;
      }
    } else if (type.startsWith("image/")) {
      data = await response.blob();
    } else {
      data = await response.text();
    }
    return { ok: response.ok, status: response.status, type, data };
  }

  // -- formatting --------------------------------------------------------------------------

  function num(x, digits) {
    if (typeof x !== "number" || !Number.isFinite(x)) return "–";
    const d = digits || 4;
    if (Number.isInteger(x) && Math.abs(x) < 1e9) return x.toLocaleString("en-US");
    const s = Number(x.toPrecision(d));
    return Math.abs(s) >= 1e6 || (Math.abs(s) < 1e-3 && s !== 0) ? s.toExponential(d - 1) : String(s);
  }

  /* Power as a percentage, with enough decimals that a shortfall never rounds up to the target. */
  function pct(p, target) {
    if (typeof p !== "number") return "–";
    if (p < 1 && p >= 0.9995 && typeof target !== "number") return "more than 99.9 %";
    let digits = 1;
    if (typeof target === "number") {
      while (digits < 6 && p < target && Number((p * 100).toFixed(digits)) >= target * 100) digits++;
    }
    return (p * 100).toFixed(digits) + " %";
  }

  function sizesText(sizes) {
    return sizes.map((n, i) => groupName(i) + ": " + n.toLocaleString("en-US")).join(", ");
  }

  /* "26 per group" when the groups are equal, else each group by name. */
  function sizesPhrase(sizes) {
    return sizes.every((v) => v === sizes[0]) ? sizes[0].toLocaleString("en-US") + " per group" : sizesText(sizes);
  }

  // -- showing the answer -------------------------------------------------------------------

  function addPoint(text) {
    const li = document.createElement("li");
    li.textContent = text;
    $("answer-points").append(li);
  }

  function addNumber(label, value) {
    const tr = document.createElement("tr");
    const th = document.createElement("th");
    th.scope = "row";
    th.textContent = label;
    const td = document.createElement("td");
    td.textContent = value;
    tr.append(th, td);
    $("number-rows").append(tr);
  }

  function addList(title, items, cls) {
    if (!items || !items.length) return;
    const h = document.createElement("h3");
    h.className = "notes-title";
    h.textContent = title;
    $("notes").append(h);
    if (cls) {
      for (const text of items) {
        const p = document.createElement("p");
        p.className = cls;
        p.textContent = text;
        $("notes").append(p);
      }
      return;
    }
    const ul = document.createElement("ul");
    for (const text of items) {
      const li = document.createElement("li");
      li.textContent = text;
      ul.append(li);
    }
    $("notes").append(ul);
  }

  function resetAnswer() {
    $("placeholder").hidden = true;
    $("answer").hidden = false;
    $("details").hidden = false;
    $("headline").className = "headline";
    for (const id of ["headline", "answer-points", "number-rows", "notes", "curve-body", "curve-rows", "report-text"]) {
      $(id).textContent = "";
    }
    $("report-text").value = "";
    $("curve").hidden = true;
    $("curve-points-box").hidden = true;
    $("curve-note").hidden = true;
    $("report").hidden = true;
    $("report-note").hidden = true;
  }

  function testNumbers(r) {
    addNumber("Significance level", num(r.alpha));
    if (typeof r.df_numerator === "number") {
      addNumber("Degrees of freedom of the test", num(r.df_numerator) + " and " + num(r.df_denominator, 5));
    }
    if (typeof r.noncentrality === "number") addNumber("Noncentrality λ", num(r.noncentrality));
    if (typeof r.critical_value === "number") addNumber("Critical value of the test", num(r.critical_value));
    if (r.method) addNumber("Method", r.method.reference);
  }

  function effectNumbers(effect) {
    if (!effect) return;
    if (typeof effect.cohens_f === "number") addNumber("Effect size, Cohen's f", num(effect.cohens_f));
    if (typeof effect.eta_squared === "number") addNumber("Share of variance explained by the groups, η²", num(effect.eta_squared));
    if (typeof effect.sd_of_means === "number") addNumber("Spread (SD) of the group means", num(effect.sd_of_means) + measureUnit());
    if (typeof effect.range_of_means === "number") addNumber("Largest minus smallest mean", num(effect.range_of_means) + measureUnit());
  }

  function commonNotes(r) {
    addList("Warnings", r.warnings, "warning");
    addList("What the answer rests on", r.assumptions);
    addList("Cautions", r.cautions);
  }

  function showSampleSize(r) {
    const unit = unitWord();
    const equal = r.n_per_group !== null && r.n_per_group !== undefined;
    $("headline").textContent = equal
      ? r.n_per_group.toLocaleString("en-US") + " " + unit + " per group (" + r.n_total.toLocaleString("en-US") + " in all) give " + pct(r.achieved_power) + " power."
      : sizesText(r.group_sizes) + " (" + r.n_total.toLocaleString("en-US") + " in all) give " + pct(r.achieved_power) + " power.";
    if (r.enrolment) {
      const e = r.enrolment;
      addPoint("Enrol " + sizesPhrase(e.group_sizes) + " (" +
        e.n_total.toLocaleString("en-US") + " in all) so that enough remain after " + num(e.dropout_rate * 100) + " % losses.");
    }
    if (r.one_step_smaller) {
      const s = r.one_step_smaller;
      addPoint("One fewer in the smallest group (" + sizesPhrase(s.group_sizes) + ") would give " + pct(s.power, r.target_power) +
        ", short of the " + pct(r.target_power) + " wanted: the answer is the smallest that reaches it.");
    }
    testNumbers(r);
    effectNumbers(r.effect);
    commonNotes(r);
  }

  function showPower(r) {
    const unit = unitWord();
    const equal = r.group_sizes.every((v) => v === r.group_sizes[0]);
    const sizes = equal ? r.group_sizes[0].toLocaleString("en-US") + " " + unit + " per group" : "group sizes " + sizesText(r.group_sizes);
    $("headline").textContent = "With " + sizes + " (" + r.n_total.toLocaleString("en-US") + " in all) the power is " + pct(r.power) + ".";
    addPoint("That is the chance that the test at level " + num(r.alpha) + " finds the expected difference, if it is real.");
    testNumbers(r);
    effectNumbers(r.effect);
    commonNotes(r);
  }

  function showDetectable(r) {
    const unit = unitWord();
    const n = r.group_sizes.every((v) => v === r.group_sizes[0]) ? r.group_sizes[0].toLocaleString("en-US") + " " + unit + " per group" : sizesText(r.group_sizes);
    let what;
    const sdOfMeans = r.sd_of_means ?? r.weighted_sd_of_means;
    const f = r.cohens_f ?? r.cohens_f_equivalent;
    if (typeof sdOfMeans === "number" && typeof f === "number") {
      what = "group means spread with an SD of " + num(sdOfMeans) + measureUnit() + (r.sd_of_means === undefined ? " (precision-weighted)" : "") +
        " (Cohen's f = " + num(f) + ")";
    } else if (typeof f === "number") {
      what = "an effect of Cohen's f = " + num(f);
    } else {
      what = "an effect with noncentrality λ = " + num(r.noncentrality);
    }
    $("headline").textContent = "With " + n + ", " + what + " would be detected with " + pct(r.achieved_power) + " power.";
    if (typeof r.min_range === "number") {
      addPoint("For example, the two most different groups " + num(r.min_range) + measureUnit() +
        " apart with the others midway between them (the hardest pattern to detect for that range).");
    }
    if (typeof r.eta_squared === "number") addPoint("The groups would explain " + (r.eta_squared * 100).toFixed(1) + " % of the variance (η²).");
    testNumbers(r);
    commonNotes(r);
  }

  function showAllocation(r) {
    const o = r.optimal;
    const b = r.balanced;
    const unit = unitWord();
    if (r.goal === "least_cost_for_power") {
      $("headline").textContent = "Split " + sizesText(o.group_sizes) + " (" + o.n_total.toLocaleString("en-US") + " " + unit +
        ", cost " + num(o.cost, 6) + ") to reach " + pct(o.power) + " power at the least cost.";
      if (b) {
        addPoint("Equal groups would need " + b.group_sizes[0].toLocaleString("en-US") + " per group (cost " + num(b.cost, 6) +
          "): the split saves " + num(r.comparison.cost_saving, 6) + " (" + pct(r.comparison.cost_saving_fraction) + ").");
      }
    } else {
      $("headline").textContent = "Split " + sizesText(o.group_sizes) + " (" + o.n_total.toLocaleString("en-US") + " " + unit +
        ", cost " + num(o.cost, 6) + ") for the most power: " + pct(o.power) + ".";
      if (b) {
        addPoint("Equal groups within the same limit (" + sizesText(b.group_sizes) + ", cost " + num(b.cost, 6) + ") give " + pct(b.power) + ".");
      }
    }
    if (r.rule) {
      addPoint("The published rule for two groups, n₁/n₂ = (σ₁/σ₂)·√(c₂/c₁), gives the ratio " + num(r.rule.ratios[0] / r.rule.ratios[1], 4) +
        "; the whole-number answer has " + num(o.group_sizes[0] / o.group_sizes[1], 4) + ".");
    }
    addNumber("Significance level", num(r.alpha));
    addNumber("Costs per unit", r.costs.map((c, i) => groupName(i) + ": " + num(c, 6)).join(", "));
    addNumber("Search", r.search.exhaustive ? "every allocation was evaluated" : "local search with an exhaustive box around the result");
    if (r.method) addNumber("Power method", r.method.reference);
    commonNotes(r);
  }

  function showFailure(result) {
    const data = result.data && typeof result.data === "object" ? result.data : {};
    const errors = [];
    if (data.errors) {
      for (const [path, messages] of Object.entries(data.errors)) {
        for (const message of messages) errors.push({ id: inputFor(path), message: message, path: path });
      }
    }
    if (!errors.length) {
      errors.push({ id: null, message: data.detail || "the service answered with status " + result.status });
    }
    for (const e of errors) {
      if (!e.id) e.message = (e.path && e.path !== "body" ? e.path + ": " : "") + e.message;
    }
    resetAnswer();
    $("details").hidden = true;
    $("headline").className = "headline failed";
    if (result.status === 401) {
      $("headline").textContent = "This service asks for an API key: open “Access key” below the question and enter one.";
    } else if (errors.some((e) => e.id)) {
      $("headline").textContent = "No answer yet: check the entries marked in the form.";
    } else {
      $("headline").textContent = "No answer: " + (data.detail || "the request was not accepted") + ".";
    }
    showErrors(errors);
  }

  // -- the curve and the protocol text ------------------------------------------------------

  function curveRange(question, r, body) {
    const n = question === "sample-size" ? r.smallest_group : body.n_per_group;
    const top = Math.min(100000, Math.max(n * 2, n + 8));
    return { from: 2, to: top, points: Math.min(top - 1, 40) };
  }

  function pointsOf(data) {
    const list = data && Array.isArray(data.points) ? data.points : null;
    if (!list) return null;
    return list.map((p) => ({
      size: p.n_per_group ?? p.smallest_group ?? p.size,
      total: p.n_total ?? p.total,
      power: p.power,
    })).filter((p) => typeof p.size === "number" && typeof p.power === "number");
  }

  async function showCurve(question, r, body) {
    if (question !== "sample-size" && question !== "power") return;
    const range = curveRange(question, r, body);
    const request = { design: body.design, alpha: body.alpha, range: { vary: "n_per_group", from: range.from, to: range.to, points: range.points } };
    if (question === "sample-size") request.target_power = body.target_power;
    const [table, chart] = await Promise.all([
      call("v1/power-curve", request, "application/json"),
      call("v1/power-curve", request, "image/svg+xml"),
    ]);
    if (!chart.ok || !(chart.data instanceof Blob)) {
      $("curve-note").hidden = false;
      $("curve-note").textContent = chart.status === 404
        ? "This server does not draw power curves yet (POST /v1/power-curve is not available)."
        : "The power curve could not be drawn" + (chart.data && chart.data.detail ? ": " + chart.data.detail : ".");
      return;
    }
    const points = table.ok ? pointsOf(table.data) : null;
    const img = document.createElement("img");
    img.src = URL.createObjectURL(chart.data);
    let alt = "Chart of power against " + unitWord() + " per group, from " + range.from + " to " + range.to + ".";
    if (points && points.length) {
      const first = points[0];
      const last = points[points.length - 1];
      alt = "Power rises from " + pct(first.power) + " with " + first.size + " per group to " + pct(last.power) + " with " + last.size + " per group.";
      if (question === "sample-size") alt += " The answer, " + r.smallest_group + " per group, is marked.";
      for (const p of points) {
        const tr = document.createElement("tr");
        for (const v of [p.size, p.total, pct(p.power)]) {
          const td = document.createElement("td");
          td.textContent = typeof v === "number" ? v.toLocaleString("en-US") : String(v ?? "–");
          tr.append(td);
        }
        $("curve-rows").append(tr);
      }
      $("curve-points-box").hidden = false;
    }
    img.alt = alt;
    $("curve-body").append(img);
    $("curve").hidden = false;
  }

  function reportText(result) {
    if (typeof result.data === "string") return result.data;
    const d = result.data || {};
    for (const key of ["text", "report", "content", "body", "markdown", "html"]) {
      if (typeof d[key] === "string") return d[key];
    }
    return null;
  }

  async function showReport() {
    if (!lastRequest || lastRequest.operation === "allocation") return;
    const format = $("report-format").value;
    const accept = { text: "text/plain", markdown: "text/markdown", html: "text/html" }[format];
    const result = await call("v1/report", { operation: lastRequest.operation, request: lastRequest.body, format: format }, accept + ", application/json;q=0.9");
    const text = result.ok ? reportText(result) : null;
    if (text === null) {
      $("report").hidden = true;
      $("report-note").hidden = false;
      $("report-note").textContent = result.status === 404
        ? "This server does not write protocol text yet (POST /v1/report is not available)."
        : "The protocol text could not be written" + (result.data && result.data.detail ? ": " + result.data.detail : ".");
      return;
    }
    $("report-note").hidden = true;
    $("report").hidden = false;
    $("report-text").value = text;
  }

  async function copyReport() {
    const area = $("report-text");
    let done = false;
    if (navigator.clipboard && window.isSecureContext) {
      try {
        await navigator.clipboard.writeText(area.value);
        done = true;
      } catch (err) {
        done = false;
      }
    }
    if (!done) {
      area.select();
      try {
        done = document.execCommand("copy");
      } catch (err) {
        done = false;
      }
    }
    $("copy-status").textContent = done ? "Copied." : "Select the text and copy it with your keyboard.";
  }

  /* Bring the answer into view when it is off screen (focus stays where it was). */
  function revealAnswer() {
    const box = $("headline").getBoundingClientRect();
    if (box.top < 0 || box.bottom > window.innerHeight) $("results").scrollIntoView({ block: "start" });
  }

  // -- the submit ---------------------------------------------------------------------------

  async function submit(event) {
    event.preventDefault();
    clearErrors();
    const built = buildRequest();
    if (built.errors.length) {
      showErrors(built.errors);
      return;
    }
    const results = $("results");
    const button = $("submit");
    results.setAttribute("aria-busy", "true");
    button.disabled = true;
    try {
      const result = await call("v1/" + built.question, built.body);
      if (!result.ok || !result.data || typeof result.data !== "object") {
        lastRequest = null;
        showFailure(result);
        return;
      }
      resetAnswer();
      const r = result.data;
      lastRequest = { operation: built.question, body: built.body };
      ({ "sample-size": showSampleSize, power: showPower, "detectable-effect": showDetectable, allocation: showAllocation })[built.question](r);
      revealAnswer();
      await Promise.all([showCurve(built.question, r, built.body), showReport()]);
    } finally {
      button.disabled = false;
      results.setAttribute("aria-busy", "false");
      results.dataset.state = "done";
      results.dataset.run = String(Number(results.dataset.run || 0) + 1);
    }
  }

  function init() {
    renderGroups();
    $("group-count").addEventListener("change", renderGroups);
    for (const name of ["effect-kind", "spread-kind", "question", "split-goal"]) {
      for (const input of document.querySelectorAll('input[name="' + name + '"]')) {
        input.addEventListener("change", syncVisibility);
      }
    }
    $("sd").addEventListener("change", () => {
      // A common SD typed first becomes the starting value of each group's own SD.
      for (let i = 0; i < MAX_GROUPS; i++) {
        const cell = $("sdg-" + i);
        if (cell && radio("spread-kind") === "same") cell.value = $("sd").value;
      }
    });
    $("planner").addEventListener("submit", submit);
    $("report-format").addEventListener("change", showReport);
    $("copy-report").addEventListener("click", copyReport);
    syncVisibility();
    document.body.dataset.ready = "true";
  }

  if (document.readyState === "loading") document.addEventListener("DOMContentLoaded", init);
  else init();
})();
