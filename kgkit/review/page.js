// kgkit review page: the topic tree, its search box and the topic card.
// Plain browser JavaScript, no libraries; the data is in #review-data.
(function () {
  "use strict";
  const data = JSON.parse(document.getElementById("review-data").textContent);
  const topics = data.topics;
  const byId = new Map(topics.map((t) => [t.id, t]));
  const children = new Map();
  for (const t of topics) {
    for (const p of t.parents || []) {
      if (!children.has(p)) children.set(p, []);
      children.get(p).push(t.id);
    }
  }

  // the same steps as the lexicon's match key, as far as a browser offers them:
  // NFKC, white space folded, case folded (lower case plus the German sharp s)
  function key(text) {
    return String(text).normalize("NFKC").replace(/\s+/g, " ").trim().toLowerCase()
      .replace(/\u00df/g, "ss");
  }
  function label(t) {
    const l = t.labels || {};
    if (l.en) return l.en;
    if (l[""]) return l[""];
    const langs = Object.keys(l).sort();
    return langs.length ? l[langs[0]] : t.id;
  }
  const byLabel = (a, b) => {
    const la = key(label(byId.get(a))), lb = key(label(byId.get(b)));
    return la < lb ? -1 : la > lb ? 1 : a < b ? -1 : a > b ? 1 : 0;
  };
  for (const list of children.values()) list.sort(byLabel);

  // every searchable text of a topic: [shown text, key, what it is]
  const names = new Map();
  for (const t of topics) {
    const out = [];
    for (const [lang, text] of Object.entries(t.labels || {})) {
      if (text) out.push([text, key(text), "label " + (lang || "untagged")]);
    }
    for (const [lang, list] of Object.entries(t.aliases || {})) {
      for (const text of list) out.push([text, key(text), "alias " + (lang || "untagged")]);
    }
    if (t.notation) out.push([t.notation, key(t.notation), "code"]);
    out.push([t.id, key(t.id), "id"]);
    names.set(t.id, out);
  }

  const tree = document.getElementById("tree");
  const detail = document.getElementById("detail");
  const search = document.getElementById("search");
  const status = document.getElementById("search-status");

  function el(tag, attrs, ...kids) {
    const node = document.createElement(tag);
    for (const [k, v] of Object.entries(attrs || {})) {
      if (k === "class") node.className = v;
      else node.setAttribute(k, v);
    }
    for (const kid of kids) {
      if (kid == null) continue;
      node.append(kid instanceof Node ? kid : document.createTextNode(String(kid)));
    }
    return node;
  }

  function setOpen(li, open) {
    const btn = li.querySelector(":scope > .row > .twisty");
    if (!btn) return;
    li.classList.toggle("open", open);
    btn.setAttribute("aria-expanded", open ? "true" : "false");
    btn.textContent = open ? "\u25be" : "\u25b8";
  }

  function render(id, trail) {
    const t = byId.get(id);
    const kids = (children.get(id) || []).filter((k) => !trail.has(k));
    const li = el("li", { class: "node", role: "treeitem", "data-id": id });
    const row = el("div", { class: "row" });
    if (kids.length) {
      const btn = el("button", { class: "twisty", type: "button", "aria-label": "fold or unfold" });
      btn.addEventListener("click", () => setOpen(li, !li.classList.contains("open")));
      row.append(btn);
    } else {
      row.append(el("span", { class: "twisty leaf", "aria-hidden": "true" }, "\u00b7"));
    }
    const name = el("a", { class: "name", href: "#topic=" + encodeURIComponent(id) }, label(t));
    name.addEventListener("click", (ev) => { ev.preventDefault(); show(id, true); });
    row.append(name);
    row.append(el("span", { class: "hint" }));
    if (kids.length) row.append(el("span", { class: "count", title: "children" }, kids.length));
    if ((t.parents || []).length > 1) {
      row.append(el("span", { class: "tag multi", title: "more than one parent" },
        (t.parents || []).length + " parents"));
    }
    if (t.status === "deprecated") row.append(el("span", { class: "tag dep" }, "deprecated"));
    if (t.origin === "curation") row.append(el("span", { class: "tag cur" }, "curation"));
    li.append(row);
    if (kids.length) {
      const ul = el("ul", { role: "group" });
      const next = new Set(trail); next.add(id);
      for (const k of kids) ul.append(render(k, next));
      li.append(ul);
    }
    setOpen(li, false);
    return li;
  }

  const roots = topics.filter((t) => t.status !== "deprecated" &&
    !(t.parents || []).some((p) => byId.has(p))).map((t) => t.id).sort(byLabel);
  const gone = topics.filter((t) => t.status === "deprecated").map((t) => t.id).sort(byLabel);
  const top = el("ul", { class: "roots" });
  for (const r of roots) top.append(render(r, new Set()));
  for (const r of gone) top.append(render(r, new Set()));
  tree.append(top);
  for (const li of top.children) setOpen(li, true);
  const allNodes = Array.from(tree.querySelectorAll("li.node"));

  function markText(text, q) {
    const i = key(text).indexOf(q);
    // offsets of the key and of the text agree only when folding kept the length
    if (!q || i < 0 || key(text).length !== text.length) return document.createTextNode(text);
    const frag = document.createDocumentFragment();
    frag.append(text.slice(0, i), el("mark", {}, text.slice(i, i + q.length)),
      text.slice(i + q.length));
    return frag;
  }

  // the shown label first: a hit there is marked in place, not named in a hint
  const shownKey = new Map(topics.map((t) => [t.id, key(label(t))]));
  function matchOf(id, q) {
    if (shownKey.get(id).includes(q)) return [label(byId.get(id)), "label"];
    for (const [text, k, what] of names.get(id)) if (k.includes(q)) return [text, what];
    return null;
  }

  // the parts of each tree node that a search changes, found once
  const parts = new Map(allNodes.map((li) => [li, {
    name: li.querySelector(":scope > .row > .name"),
    hint: li.querySelector(":scope > .row > .hint"),
    up: li.parentElement.closest("li.node"),
  }]));
  let decorated = [];

  function show_(li, visible, open) {
    if (li.hidden === visible) li.hidden = !visible;
    if (li.classList.contains("open") !== open) setOpen(li, open);
  }

  function applySearch() {
    const q = key(search.value);
    for (const li of decorated) {
      const p = parts.get(li);
      p.name.textContent = label(byId.get(li.dataset.id));
      p.hint.textContent = "";
      li.classList.remove("hit");
    }
    decorated = [];
    if (!q) {
      for (const li of allNodes) show_(li, true, li.parentElement === top);
      status.textContent = "";
      tree.classList.remove("searching");
      return;
    }
    tree.classList.add("searching");
    // matches come from the data; a node stays visible when it matches or one below it does
    const hits = new Map();
    for (const t of topics) {
      const m = matchOf(t.id, q);
      if (m) hits.set(t.id, m);
    }
    const visible = new Set(), opened = new Set();
    for (const li of allNodes) {
      if (!hits.has(li.dataset.id)) continue;
      visible.add(li);
      for (let up = parts.get(li).up; up && !opened.has(up); up = parts.get(up).up) {
        opened.add(up);
        visible.add(up);
      }
    }
    for (const li of allNodes) show_(li, visible.has(li), opened.has(li));
    for (const li of visible) {
      const m = hits.get(li.dataset.id);
      if (!m) continue;
      const p = parts.get(li);
      const shown = label(byId.get(li.dataset.id));
      p.name.textContent = "";
      if (m[1].startsWith("label") && m[0] === shown) p.name.append(markText(shown, q));
      else {
        // matched through an alias, a label in another language, or the id: say which
        p.name.textContent = shown;
        const what = m[1].startsWith("alias") ? "alias" : m[1];
        p.hint.append(what + ": ", markText(m[0], q));
      }
      li.classList.add("hit");
      decorated.push(li);
    }
    status.textContent = hits.size
      ? hits.size + (hits.size === 1 ? " topic matches" : " topics match")
      : "no topic matches \u201c" + search.value.trim() + "\u201d";
  }

  function dl(pairs) {
    const d = el("dl", { class: "card-list" });
    for (const [k, v] of pairs) {
      if (v == null || v === "" || (Array.isArray(v) && !v.length)) continue;
      d.append(el("dt", {}, k), el("dd", {}, v));
    }
    return d;
  }
  function topicRef(id) {
    const t = byId.get(id);
    const a = el("a", { href: "#topic=" + encodeURIComponent(id), class: "tref" },
      t ? label(t) : id);
    a.addEventListener("click", (ev) => { ev.preventDefault(); show(id, true); });
    return a;
  }
  function refs(ids) {
    const span = el("span", { class: "refs" });
    ids.forEach((id, i) => { if (i) span.append(", "); span.append(topicRef(id)); });
    return span;
  }

  function show(id, reveal) {
    const t = byId.get(id);
    if (!t) return;
    detail.textContent = "";
    const langs = Array.from(new Set([...Object.keys(t.labels || {}),
      ...Object.keys(t.aliases || {}), ...data.languages.filter((l) => l)])).sort();
    const table = el("table", { class: "langs" },
      el("thead", {}, el("tr", {}, el("th", {}, "language"), el("th", {}, "preferred label"),
        el("th", {}, "aliases"))));
    const body = el("tbody");
    for (const lang of langs) {
      const pref = (t.labels || {})[lang];
      const al = ((t.aliases || {})[lang] || []).join(", ");
      body.append(el("tr", { class: pref ? "" : "missing" }, el("td", {}, lang || "untagged"),
        el("td", {}, pref || "\u2014 missing"), el("td", {}, al)));
    }
    table.append(body);
    const kids = children.get(id) || [];
    detail.append(
      el("h3", {}, label(t)),
      el("p", { class: "tid" }, el("code", {}, t.id),
        t.status === "deprecated" ? el("span", { class: "tag dep" }, "deprecated") : null),
      table,
      dl([
        ["parents", (t.parents || []).length ? refs(t.parents) : "none (a root)"],
        ["children", kids.length ? refs(kids) : null],
        ["depth", t.depth],
        ["replaced by", t.replaced_by ? topicRef(t.replaced_by) : null],
        ["origin", t.origin === "curation" ? "added by curation" : "from the graph"],
        ["source", t.source ? el("code", { class: "iri" }, t.source) : null],
        ["CURIE", t.curie],
        ["graph", t.graph],
        ["notation", t.notation],
        ["same as", (t.same_as || []).length ? el("code", { class: "iri" },
          t.same_as.join("\n")) : null],
        ["flags", (t.flags || []).join(", ")],
      ]));
    for (const li of allNodes) li.classList.toggle("current", li.dataset.id === id);
    if (reveal) {
      const li = allNodes.find((n) => n.dataset.id === id);
      if (li) {
        for (let p = li.parentElement; p && p !== tree; p = p.parentElement) {
          if (p.matches("li.node")) { p.hidden = false; setOpen(p, true); }
        }
        li.hidden = false;
        li.scrollIntoView({ block: "nearest" });
      }
      history.replaceState(null, "", "#topic=" + encodeURIComponent(id));
    }
  }

  let pending = 0;
  search.addEventListener("input", () => {
    // a large vocabulary waits for a pause in the typing; a small one answers each key
    clearTimeout(pending);
    if (topics.length > 5000) pending = setTimeout(applySearch, 120);
    else applySearch();
  });
  search.addEventListener("keydown", (ev) => {
    if (ev.key === "Enter") {
      const first = allNodes.find((li) => li.classList.contains("hit") && !li.hidden);
      if (first) show(first.dataset.id, true);
    } else if (ev.key === "Escape") {
      search.value = "";
      applySearch();
    }
  });
  document.getElementById("expand-all").addEventListener("click", () => {
    for (const li of allNodes) if (!li.hidden) setOpen(li, true);
  });
  document.getElementById("collapse-all").addEventListener("click", () => {
    for (const li of allNodes) setOpen(li, false);
  });
  document.addEventListener("click", (ev) => {
    const a = ev.target.closest("a.tref[data-topic]");
    if (a) {
      ev.preventDefault();
      show(a.dataset.topic, true);
      document.getElementById("topics").scrollIntoView();
    }
  });

  // #q=TEXT fills the search box; #topic=ID opens a topic
  const hash = new URLSearchParams(location.hash.slice(1));
  if (hash.get("q")) { search.value = hash.get("q"); applySearch(); }
  if (hash.get("topic")) show(hash.get("topic"), true);
  document.body.dataset.ready = "true";
})();
