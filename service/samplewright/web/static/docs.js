/* samplewright API reference: renders this service's OpenAPI 3.1 document (paths, request
   and response schemas, bounds) with plain DOM calls; spec text never becomes markup. */
"use strict";

(function () {
  const $ = (id) => document.getElementById(id);
  const METHODS = ["get", "post", "put", "patch", "delete"];
  let spec = null;

  function el(tag, attrs, ...children) {
    const node = document.createElement(tag);
    for (const [k, v] of Object.entries(attrs || {})) {
      if (v === undefined || v === null || v === false) continue;
      if (k === "class") node.className = v;
      else if (k === "text") node.textContent = v;
      else node.setAttribute(k, v);
    }
    for (const child of children) {
      if (child === null || child === undefined) continue;
      node.append(child instanceof Node ? child : document.createTextNode(String(child)));
    }
    return node;
  }

  /* Descriptions use `backticks` for code; nothing else of Markdown is interpreted. */
  function prose(text, tag) {
    const node = el(tag || "span");
    String(text || "").split(/(`[^`]*`)/).forEach((part) => {
      if (part.startsWith("`") && part.endsWith("`") && part.length > 1) node.append(el("code", { text: part.slice(1, -1) }));
      else if (part) node.append(document.createTextNode(part));
    });
    return node;
  }

  function slug(text) {
    return String(text).replace(/[^A-Za-z0-9_-]+/g, "-").replace(/^-+|-+$/g, "") || "x";
  }

  function refName(ref) {
    return ref.split("/").pop();
  }

  function resolve(schema) {
    if (schema && schema.$ref) return spec.components.schemas[refName(schema.$ref)] || {};
    return schema || {};
  }

  function schemaLink(ref) {
    const name = refName(ref);
    return el("a", { href: "#schema-" + slug(name), text: name });
  }

  function fmt(v) {
    return typeof v === "number" ? String(v) : JSON.stringify(v);
  }

  /* The type of a property in words: "number", "array of integer", "Step or null", a link… */
  function typeOf(schema) {
    const span = el("span", { class: "type" });
    if (!schema) return span;
    if (schema.$ref) {
      span.append(schemaLink(schema.$ref));
      return span;
    }
    if (schema.oneOf && schema.discriminator) {
      span.append("object, one of " + schema.oneOf.length + " by ");
      span.append(el("code", { text: schema.discriminator.propertyName }));
      return span;
    }
    const variants = schema.oneOf || schema.anyOf;
    if (variants) {
      variants.forEach((v, i) => {
        if (i) span.append(v.type === "null" ? " or " : " | ");
        span.append(v.type === "null" ? "null" : typeOf(v));
      });
      return span;
    }
    const types = Array.isArray(schema.type) ? schema.type : schema.type ? [schema.type] : [];
    types.forEach((t, i) => {
      if (i) span.append(" or ");
      if (t === "array") {
        span.append("array of ");
        span.append(schema.items ? typeOf(schema.items) : "any");
      } else {
        span.append(t);
      }
    });
    if (!types.length) span.append(schema.properties ? "object" : "any");
    return span;
  }

  /* Allowed values in words: bounds, lengths, choices and the default. */
  function bounds(schema) {
    const parts = [];
    if (!schema) return parts;
    if ("minimum" in schema) parts.push("≥ " + fmt(schema.minimum));
    if ("exclusiveMinimum" in schema) parts.push("> " + fmt(schema.exclusiveMinimum));
    if ("maximum" in schema) parts.push("≤ " + fmt(schema.maximum));
    if ("exclusiveMaximum" in schema) parts.push("< " + fmt(schema.exclusiveMaximum));
    if ("minItems" in schema || "maxItems" in schema) {
      parts.push((schema.minItems ?? 0) + " to " + (schema.maxItems ?? "any number of") + " items");
    }
    if ("minLength" in schema || "maxLength" in schema) {
      parts.push((schema.minLength ?? 0) + " to " + (schema.maxLength ?? "any") + " characters");
    }
    if (schema.enum) parts.push("one of " + schema.enum.map(fmt).join(", "));
    if (schema.items && !schema.items.$ref) {
      const inner = bounds(schema.items);
      if (inner.length) parts.push("each item " + inner.join(", "));
    }
    if ("default" in schema) parts.push("default " + fmt(schema.default));
    return parts;
  }

  function variantsBlock(schema) {
    const box = el("div", { class: "variant" });
    const disc = schema.discriminator;
    box.append(el("p", {}, "One of these, chosen by ", disc ? el("code", { text: disc.propertyName }) : "its shape", ":"));
    const ul = el("ul");
    if (disc && disc.mapping) {
      for (const [value, ref] of Object.entries(disc.mapping)) {
        ul.append(el("li", {}, el("code", { text: fmt(value) }), " → ", schemaLink(ref)));
      }
    } else {
      for (const v of schema.oneOf || schema.anyOf || []) ul.append(el("li", {}, typeOf(v)));
    }
    box.append(ul);
    return box;
  }

  /* A table of an object's fields; nested inline objects are expanded a few levels deep. */
  function propertiesTable(schema, depth) {
    schema = resolve(schema);
    const props = schema.properties || {};
    const required = new Set(schema.required || []);
    const names = Object.keys(props);
    if (!names.length) {
      const p = el("p", { class: "bounds" });
      p.append(schema.additionalProperties === false ? "No fields." : "A JSON object" + (schema.type ? " (" + schema.type + ")" : "") + ".");
      return p;
    }
    const table = el("table", { class: "schema" },
      el("thead", {}, el("tr", {},
        el("th", { scope: "col", text: "Field" }), el("th", { scope: "col", text: "Type" }),
        el("th", { scope: "col", text: "Allowed" }), el("th", { scope: "col", text: "Meaning" }))));
    const body = el("tbody");
    for (const name of names) {
      const prop = props[name];
      const nameCell = el("td", { class: "name" }, name);
      if (required.has(name)) nameCell.append(" ", el("span", { class: "required", title: "required", text: "*" }), el("span", { class: "visually-hidden", text: " (required)" }));
      const meaning = el("td");
      if (prop.description) meaning.append(prose(prop.description));
      if (prop.oneOf && prop.discriminator) meaning.append(variantsBlock(prop));
      if (!prop.$ref && prop.properties && depth < 3) meaning.append(propertiesTable(prop, depth + 1));
      body.append(el("tr", {}, nameCell, el("td", {}, typeOf(prop)), el("td", { class: "bounds", text: bounds(prop).join("; ") }), meaning));
    }
    table.append(body);
    return table;
  }

  function schemaBlock(title, schema) {
    const box = el("div", { class: "schema-block" });
    box.append(el("h4", { text: title }));
    if (schema.$ref) box.append(el("p", { class: "bounds" }, "Schema ", schemaLink(schema.$ref), ":"));
    const target = resolve(schema);
    if (target.oneOf && target.discriminator) box.append(variantsBlock(target));
    else if (target.type === "string" || target.type === "array") box.append(el("p", {}, typeOf(target), bounds(target).length ? " (" + bounds(target).join("; ") + ")" : ""));
    else box.append(propertiesTable(target, 0));
    return box;
  }

  function operationSection(path, method, op) {
    const id = "op-" + slug(op.operationId || method + path);
    const section = el("section", { class: "op", id: id, "aria-labelledby": id + "-title" });
    section.append(el("h3", { id: id + "-title" }, el("span", { class: "method " + method, text: method.toUpperCase() }), el("span", { class: "path", text: path })));
    if (op.summary) section.append(prose(op.summary, "p"));
    if (op.description) section.append(prose(op.description, "p"));
    if (op.requestBody) {
      for (const [media, content] of Object.entries(op.requestBody.content || {})) {
        section.append(schemaBlock("Request body (" + media + ")", content.schema || {}));
      }
    }
    const responses = op.responses || {};
    const ok = responses["200"];
    if (ok && ok.content) {
      for (const [media, content] of Object.entries(ok.content)) {
        section.append(schemaBlock("Response 200 (" + media + ")", content.schema || {}));
      }
    }
    const others = Object.keys(responses).filter((c) => c !== "200").sort();
    if (others.length) {
      section.append(el("h4", { text: "Other responses" }));
      const ul = el("ul", { class: "responses" });
      for (const code of others) {
        const r = responses[code];
        const media = r.content ? Object.keys(r.content).join(", ") : "";
        ul.append(el("li", {}, el("strong", { text: code }), " ", prose(r.description || ""), media ? " (" + media + ")" : ""));
      }
      section.append(ul);
    }
    return { id, section };
  }

  function render() {
    const info = spec.info || {};
    $("doc-version").textContent = (info.title || "API") + " version " + (info.version || "?") + " · OpenAPI " + (spec.openapi || "?");
    if (info.description) {
      const p = prose(info.description, "p");
      p.className = "note";
      $("doc-version").insertAdjacentElement("beforebegin", p);
    }
    const byTag = new Map();
    for (const [path, item] of Object.entries(spec.paths || {})) {
      for (const method of METHODS) {
        if (!item[method]) continue;
        const tag = (item[method].tags || ["other"])[0];
        if (!byTag.has(tag)) byTag.set(tag, []);
        byTag.get(tag).push([path, method, item[method]]);
      }
    }
    const ref = $("reference");
    const toc = $("toc");
    toc.append(el("h2", { text: "Endpoints" }));
    // The computations first, the pages last; any other tag keeps its place in between.
    const rank = (tag) => ({ planning: 0, simulation: 1, catalogue: 2, service: 8, pages: 9 })[tag] ?? 5;
    const tags = Array.from(byTag.keys()).sort((a, b) => rank(a) - rank(b));
    for (const tag of tags) {
      const ops = byTag.get(tag);
      const tagId = "tag-" + slug(tag);
      ref.append(el("h2", { class: "tag-title", id: tagId, text: tag }));
      toc.append(el("h2", {}, el("a", { href: "#" + tagId, text: tag })));
      const ul = el("ul");
      for (const [path, method, op] of ops) {
        const { id, section } = operationSection(path, method, op);
        ref.append(section);
        ul.append(el("li", {}, el("a", { href: "#" + id }, method.toUpperCase() + " " + path)));
      }
      toc.append(ul);
    }
    const schemas = (spec.components && spec.components.schemas) || {};
    ref.append(el("h2", { class: "tag-title", id: "schemas", text: "Schemas" }));
    toc.append(el("h2", {}, el("a", { href: "#schemas", text: "Schemas" })));
    const ul = el("ul");
    for (const name of Object.keys(schemas).sort()) {
      const section = el("section", { class: "op", id: "schema-" + slug(name), "aria-labelledby": "schema-" + slug(name) + "-title" });
      section.append(el("h3", { id: "schema-" + slug(name) + "-title", class: "path", text: name }));
      if (schemas[name].description) section.append(prose(schemas[name].description, "p"));
      const target = schemas[name];
      section.append(target.oneOf && target.discriminator ? variantsBlock(target) : propertiesTable(target, 0));
      ref.append(section);
      ul.append(el("li", {}, el("a", { href: "#schema-" + slug(name), text: name })));
    }
    toc.append(ul);
    toc.hidden = false;
    $("doc-status").textContent = "Showing " + ref.querySelectorAll("section.op[id^=op-]").length + " operations and " + Object.keys(schemas).length + " schemas.";
    if (location.hash && document.getElementById(location.hash.slice(1))) {
      document.getElementById(location.hash.slice(1)).scrollIntoView();
    }
    document.body.dataset.ready = "true";
  }

  async function init() {
    try {
      const response = await fetch("openapi.json", { headers: { Accept: "application/json" } });
      if (!response.ok) throw new Error("status " + response.status);
      spec = await response.json();
    } catch (err) {
      $("doc-status").textContent = "The OpenAPI document could not be loaded (" + err.message + "). It is at openapi.json on this service.";
      document.body.dataset.ready = "error";
      return;
    }
    render();
  }

  if (document.readyState === "loading") document.addEventListener("DOMContentLoaded", init);
  else init();
})();
