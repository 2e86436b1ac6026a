/* lenswork report page: plain JavaScript over the embedded report-data document.
   Draws the graph as SVG (pan, zoom, colouring), the node panel, the features,
   the screen table and the provenance. Loads nothing from the network. */
(function () {
  "use strict";
  var DATA = JSON.parse(document.getElementById("report-data").textContent);
  var G = DATA.graph;
  var SVGNS = "http://www.w3.org/2000/svg";
  var RAMP = ["#1f2d4a", "#2b7a78", "#9cc5a1", "#f2d492", "#d9822b"];
  var MISSING = "#d6d2ca";
  var state = { node: null, feature: null, color: null, level: null, k: 1, tx: 0, ty: 0 };
  var circles = [], lines = [], idList = null, memberCache = {};

  // ------------------------------------------------------------ helpers
  function el(tag, attrs, children) {
    var e = document.createElement(tag);
    setAttrs(e, attrs);
    (children || []).forEach(function (c) {
      e.appendChild(typeof c === "string" ? document.createTextNode(c) : c);
    });
    return e;
  }
  function svg(tag, attrs) { var e = document.createElementNS(SVGNS, tag); setAttrs(e, attrs); return e; }
  function setAttrs(e, attrs) {
    Object.keys(attrs || {}).forEach(function (k) {
      if (k === "text") e.textContent = attrs[k];
      else if (k === "onclick") e.addEventListener("click", attrs[k]);
      else e.setAttribute(k, attrs[k]);
    });
  }
  function fmt(v, digits) {
    if (v === null || v === undefined || (typeof v === "number" && !isFinite(v))) return "–";
    if (typeof v !== "number") return String(v);
    if (Number.isInteger(v) && Math.abs(v) < 1e15) return v.toLocaleString("en-US");
    var a = Math.abs(v);
    if (a !== 0 && (a < 1e-3 || a >= 1e6)) return v.toExponential(2);
    return v.toPrecision(digits || 3).replace(/(\.\d*?)0+$/, "$1").replace(/\.$/, "");
  }
  function fmtQ(q) {
    if (q === null || q === undefined) return "–";
    if (q === 0) return "≈0";
    return q < 1e-3 ? q.toExponential(0) : q.toFixed(3);
  }
  function pct(v) { return v === null || v === undefined ? "–" : (100 * v).toFixed(0) + "%"; }
  function ramp(t) {
    if (t === null || !isFinite(t)) return MISSING;
    t = Math.min(1, Math.max(0, t)) * (RAMP.length - 1);
    var i = Math.min(RAMP.length - 2, Math.floor(t)), f = t - i;
    var a = hex(RAMP[i]), b = hex(RAMP[i + 1]);
    return "rgb(" + [0, 1, 2].map(function (j) { return Math.round(a[j] + f * (b[j] - a[j])); }).join(",") + ")";
  }
  function hex(h) { return [1, 3, 5].map(function (i) { return parseInt(h.substr(i, 2), 16); }); }
  function table(head, rows, opts) {
    opts = opts || {};
    var t = el("table", opts.attrs || {});
    if (opts.caption) t.appendChild(el("caption", { "class": "muted", style: "text-align:left" }, [opts.caption]));
    var tr = el("tr");
    head.forEach(function (h, j) { tr.appendChild(el("th", { scope: "col", "class": (opts.text || []).indexOf(j) >= 0 ? "text" : "" }, [h])); });
    t.appendChild(el("thead", {}, [tr]));
    var body = el("tbody");
    rows.forEach(function (r) {
      var row = el("tr");
      r.forEach(function (c, j) {
        var td = el("td", { "class": (opts.text || []).indexOf(j) >= 0 ? "text" : "" });
        if (c instanceof Node) td.appendChild(c); else td.textContent = c;
        row.appendChild(td);
      });
      body.appendChild(row);
    });
    t.appendChild(body);
    return el("div", { "class": "table-wrap" }, [t]);
  }

  // ------------------------------------------------------------ members and ids
  function decodeMembers(text) {
    var bin = atob(text), out = [], prev = -1, value = 0, shift = 0;
    for (var i = 0; i < bin.length; i++) {
      var b = bin.charCodeAt(i);
      value += (b & 0x7f) * Math.pow(2, shift);
      if (b & 0x80) { shift += 7; continue; }
      prev = prev + value + 1; out.push(prev); value = 0; shift = 0;
    }
    return out;
  }
  function members(v) {
    if (!memberCache[v]) memberCache[v] = decodeMembers(G.members[v]);
    return memberCache[v];
  }
  function rowId(i) {
    var ids = G.ids;
    if (ids.kind === "pattern") {
      var n = String(ids.start + ids.step * i);
      while (n.length < ids.width) n = "0" + n;
      return ids.prefix + n;
    }
    if (ids.kind === "list") { if (!idList) idList = ids.ids.split("\n"); return idList[i]; }
    return null;
  }
  function csvCell(s) { return /[",\n\r]/.test(s) ? '"' + s.replace(/"/g, '""') + '"' : s; }
  function membersCsv(v) {
    var rows = members(v), hasIds = G.ids.kind !== "none";
    var parts = [hasIds ? "row," + csvCell(G.id_name) : "row"];
    for (var i = 0; i < rows.length; i++) parts.push(hasIds ? (rows[i] + 1) + "," + csvCell(rowId(rows[i])) : String(rows[i] + 1));
    return parts.join("\n") + "\n";
  }
  function download(name, text) {
    var blob = new Blob([text], { type: "text/csv" });
    var url = URL.createObjectURL(blob);
    var a = el("a", { href: url, download: name });
    document.body.appendChild(a); a.click(); a.remove();
    setTimeout(function () { URL.revokeObjectURL(url); }, 4000);
  }

  // ------------------------------------------------------------ colouring
  function colourChoices() {
    var out = [{ key: "size", label: "size (rows in the node)", kind: "numeric" }];
    G.lens_columns.forEach(function (c) { out.push({ key: "lens:" + c, label: c + " (lens)", kind: "numeric" }); });
    DATA.columns.forEach(function (c) { out.push({ key: "col:" + c.name, label: c.name + (c.type === "categorical" ? " (share of a level)" : ""), kind: c.type }); });
    return out;
  }
  function column(name) { return DATA.columns.filter(function (c) { return c.name === name; })[0]; }
  function colourValues() {
    var key = state.color;
    if (key === "size") return { values: G.size, label: "rows in the node", share: false };
    if (key.indexOf("lens:") === 0) {
      var lens = key.slice(5);
      return { values: G.lens[lens].mean, label: lens + ": node mean (lens value)", share: false };
    }
    var c = column(key.slice(4));
    if (c.type === "categorical") {
      return { values: c.share[state.level], label: "share of " + c.name + " = " + state.level, share: true };
    }
    return { values: c.mean, label: c.name + ": node mean (" + DATA.provenance.units + ")", share: false };
  }
  function applyColour() {
    var cv = colourValues(), vals = cv.values, lo = Infinity, hi = -Infinity;
    if (cv.share) { lo = 0; hi = 1; } else {
      vals.forEach(function (v) { if (v !== null && isFinite(v)) { lo = Math.min(lo, v); hi = Math.max(hi, v); } });
    }
    var span = hi > lo ? hi - lo : 1;
    circles.forEach(function (c, v) {
      var x = vals[v];
      c.setAttribute("fill", x === null || x === undefined ? MISSING : ramp((x - lo) / span));
    });
    drawLegend(cv.label, lo, hi, cv.share);
    var cells = document.querySelectorAll("#node-table td.colour");
    for (var i = 0; i < cells.length; i++) cells[i].textContent = cv.share ? pct(vals[+cells[i].dataset.node]) : fmt(vals[+cells[i].dataset.node]);
    var th = document.getElementById("colour-head");
    if (th) th.textContent = cv.label;
    if (state.node !== null) showNode(state.node, false);
  }
  function drawLegend(label, lo, hi, share) {
    var lg = document.getElementById("legend");
    while (lg.firstChild) lg.removeChild(lg.firstChild);
    var defs = svg("defs"), grad = svg("linearGradient", { id: "legend-ramp" });
    RAMP.forEach(function (c, i) { grad.appendChild(svg("stop", { offset: (100 * i / (RAMP.length - 1)) + "%", "stop-color": c })); });
    defs.appendChild(grad); lg.appendChild(defs);
    lg.appendChild(svg("text", { x: 4, y: 12, text: label }));
    lg.appendChild(svg("rect", { x: 4, y: 17, width: 300, height: 10, fill: "url(#legend-ramp)", stroke: "#7d8a96", "stroke-width": 0.5 }));
    for (var i = 0; i <= 4; i++) {
      var v = lo + (hi - lo) * i / 4, x = 4 + 75 * i;
      lg.appendChild(svg("line", { x1: x, x2: x, y1: 27, y2: 31, stroke: "#7d8a96" }));
      lg.appendChild(svg("text", { x: x, y: 42, "text-anchor": i === 0 ? "start" : i === 4 ? "end" : "middle", text: share ? pct(v) : fmt(v) }));
    }
    lg.setAttribute("aria-label", "Colour legend: " + label + ", from " + (share ? pct(lo) : fmt(lo)) + " (dark slate) to " + (share ? pct(hi) : fmt(hi)) + " (amber)");
  }

  // ------------------------------------------------------------ graph drawing, pan and zoom
  var W = 1000, H = 640, PAD = 30;
  function buildGraph(host) {
    var svgEl = svg("svg", { id: "graph", viewBox: "0 0 " + W + " " + H, role: "group", tabindex: "0",
      "aria-label": "Graph of " + G.n_nodes + " nodes and " + G.n_edges + " edges. Arrow keys pan, plus and minus zoom, 0 resets; the node table below lists every node." });
    var view = svg("g", { id: "viewport" });
    svgEl.appendChild(view);
    var xs = G.layout.x, ys = G.layout.y, x0 = Math.min.apply(null, xs), x1 = Math.max.apply(null, xs);
    var y0 = Math.min.apply(null, ys), y1 = Math.max.apply(null, ys);
    var sx = (W - 2 * PAD) / ((x1 - x0) || 1), sy = (H - 2 * PAD) / ((y1 - y0) || 1);
    var px = function (v) { return PAD + (xs[v] - x0) * sx; };
    var py = function (v) { return H - PAD - (ys[v] - y0) * sy; };
    var maxSize = Math.max.apply(null, G.size.concat([1])), maxShared = Math.max.apply(null, G.edges.shared.concat([1]));
    var eg = svg("g", { "aria-hidden": "true" });
    G.edges.source.forEach(function (a, i) {
      var b = G.edges.target[i];
      var l = svg("line", { x1: px(a), y1: py(a), x2: px(b), y2: py(b), "stroke-width": 0.8 + 2.6 * Math.sqrt(G.edges.shared[i] / maxShared), "vector-effect": "non-scaling-stroke" });
      eg.appendChild(l); lines.push(l);
    });
    view.appendChild(eg);
    var ng = svg("g");
    G.size.forEach(function (s, v) {
      var c = svg("circle", { cx: px(v), cy: py(v), r: 3.5 + 13 * Math.sqrt(s / maxSize), "data-node": v, "vector-effect": "non-scaling-stroke" });
      c.appendChild(svg("title", { text: "node " + v + ": " + s.toLocaleString("en-US") + " rows" }));
      c.addEventListener("click", function (ev) { ev.stopPropagation(); selectNode(v, true); });
      c.addEventListener("mouseenter", function (ev) { hover(v, ev); });
      c.addEventListener("mouseleave", function () { tip.style.display = "none"; });
      ng.appendChild(c); circles.push(c);
    });
    view.appendChild(ng);
    host.appendChild(svgEl);
    var tip = el("div", { "class": "tooltip", role: "presentation" });
    host.appendChild(tip);
    function hover(v, ev) {
      var cv = colourValues(), val = cv.values[v];
      tip.textContent = "node " + v + " · " + G.size[v].toLocaleString("en-US") + " rows · " + (cv.share ? pct(val) : fmt(val));
      var r = host.getBoundingClientRect();
      tip.style.left = (ev.clientX - r.left + 12) + "px"; tip.style.top = (ev.clientY - r.top + 12) + "px";
      tip.style.display = "block";
    }
    // pan and zoom: one transform on the viewport group
    function apply() { view.setAttribute("transform", "translate(" + state.tx + "," + state.ty + ") scale(" + state.k + ")"); }
    function toSvg(ev) { var r = svgEl.getBoundingClientRect(); return [(ev.clientX - r.left) * W / r.width, (ev.clientY - r.top) * H / r.height]; }
    function zoomAt(f, p) {
      var k = Math.min(40, Math.max(0.2, state.k * f));
      state.tx = p[0] - (p[0] - state.tx) * k / state.k; state.ty = p[1] - (p[1] - state.ty) * k / state.k; state.k = k; apply();
    }
    svgEl.addEventListener("wheel", function (ev) { ev.preventDefault(); zoomAt(ev.deltaY < 0 ? 1.2 : 1 / 1.2, toSvg(ev)); }, { passive: false });
    var drag = null;
    svgEl.addEventListener("pointerdown", function (ev) {
      if (ev.target.tagName === "circle") return;
      drag = { p: toSvg(ev), tx: state.tx, ty: state.ty }; svgEl.classList.add("dragging");
      svgEl.setPointerCapture(ev.pointerId);
    });
    svgEl.addEventListener("pointermove", function (ev) {
      if (!drag) return;
      var p = toSvg(ev); state.tx = drag.tx + p[0] - drag.p[0]; state.ty = drag.ty + p[1] - drag.p[1]; apply();
    });
    svgEl.addEventListener("pointerup", function () { drag = null; svgEl.classList.remove("dragging"); });
    svgEl.addEventListener("keydown", function (ev) {
      var step = 40, k = ev.key;
      if (k === "ArrowLeft") state.tx += step; else if (k === "ArrowRight") state.tx -= step;
      else if (k === "ArrowUp") state.ty += step; else if (k === "ArrowDown") state.ty -= step;
      else if (k === "+" || k === "=") return zoomAt(1.25, [W / 2, H / 2]);
      else if (k === "-") return zoomAt(0.8, [W / 2, H / 2]);
      else if (k === "0") { state.k = 1; state.tx = 0; state.ty = 0; }
      else return;
      ev.preventDefault(); apply();
    });
    return { zoomIn: function () { zoomAt(1.25, [W / 2, H / 2]); }, zoomOut: function () { zoomAt(0.8, [W / 2, H / 2]); },
      reset: function () { state.k = 1; state.tx = 0; state.ty = 0; apply(); } };
  }

  // ------------------------------------------------------------ node panel
  function selectNode(v, focusPanel) {
    if (state.node !== null) circles[state.node].classList.remove("selected");
    state.node = v; circles[v].classList.add("selected");
    showNode(v, focusPanel);
  }
  function contrastTable(rows, caption) {
    return table(["column", "δ / V", "rows", "rest", "q"], rows.map(function (r) {
      var name = el("span", {}, [r.column]);
      if (r.significant) name.appendChild(el("span", { "class": "sig", title: "q at or below the false discovery rate" }, ["\u00a0*"]));
      if (r.type === "numeric") {
        return [name, (r.delta > 0 ? "+" : "") + fmt(r.delta, 2), fmt(r.mean_in), fmt(r.mean_out), fmtQ(r.q)];
      }
      return [name, fmt(r.effect, 2), r.level + " " + pct(r.share_in), pct(r.share_out), fmtQ(r.q)];
    }), { text: [0], caption: caption, attrs: { "class": "contrast" } });
  }
  function sampleNote() {
    var C = DATA.contrast;
    return C && C.sampled ? " Computed on a seeded sample of " + C.rows.toLocaleString("en-US") + " of the " + G.n_rows.toLocaleString("en-US") + " rows (with every row of the small nodes)." : "";
  }
  function showNode(v, focusPanel) {
    var panel = document.getElementById("node-panel");
    panel.innerHTML = "";
    var h = el("h2", { id: "node-title", tabindex: "-1" }, ["Node " + v]);
    panel.appendChild(h);
    var facts = el("dl", { "class": "facts", id: "node-facts" });
    function fact(name, value, id) { facts.appendChild(el("dt", {}, [name])); facts.appendChild(el("dd", id ? { id: id } : {}, [value])); }
    fact("rows", G.size[v].toLocaleString("en-US") + " (" + (100 * G.size[v] / G.n_rows).toFixed(1) + "% of " + G.n_rows.toLocaleString("en-US") + ")", "node-size");
    G.lens_columns.forEach(function (c) {
      var s = G.lens[c];
      fact(c, fmt(s.min[v]) + " … " + fmt(s.max[v]) + " (mean " + fmt(s.mean[v]) + ")");
    });
    var cv = colourValues();
    if (state.color !== "size" && state.color.indexOf("lens:") !== 0) fact(cv.label, cv.share ? pct(cv.values[v]) : fmt(cv.values[v]));
    var deg = 0; G.edges.source.forEach(function (a, i) { if (a === v || G.edges.target[i] === v) deg++; });
    fact("neighbours", String(deg));
    panel.appendChild(facts);
    var rows = DATA.node_contrast[v] || [];
    if (DATA.columns.length) {
      panel.appendChild(el("h3", {}, ["What sets it apart"]));
      if (rows.length) panel.appendChild(contrastTable(rows, "Its rows against every other row: Cliff's δ (numeric; rows and rest: means) or Cramér's V (categorical; the level's share), in " + DATA.provenance.units + "; * q ≤ " + DATA.contrast.alpha + " (Benjamini-Hochberg over every node and feature)." + sampleNote()));
      else panel.appendChild(el("p", { "class": "muted" }, ["No column could be tested for this node."]));
    }
    var mem = members(v), shown = mem.slice(0, 12).map(function (i) { return G.ids.kind === "none" ? "row " + (i + 1) : rowId(i); });
    panel.appendChild(el("h3", {}, ["Members"]));
    panel.appendChild(el("p", { "class": "members", id: "node-members" }, [shown.join(", ") + (mem.length > shown.length ? ", … (" + (mem.length - shown.length).toLocaleString("en-US") + " more)" : "")]));
    if (G.ids.kind === "none") panel.appendChild(el("p", { "class": "hint" }, ["The row ids were too many to embed; rows are numbered by position in the table the graph was built on."]));
    panel.appendChild(el("button", { id: "download-members", type: "button", onclick: function () { download("node-" + v + "-members.csv", membersCsv(v)); } }, ["Download all " + mem.length.toLocaleString("en-US") + " members (CSV)"]));
    if (focusPanel) h.focus({ preventScroll: true });
  }

  // ------------------------------------------------------------ features
  function buildFeatures(section) {
    section.appendChild(el("h2", {}, ["Significant features"]));
    var sig = G.significance, small = G.n_small_features;
    if (!DATA.features.length) {
      section.appendChild(el("p", {}, ["No significant feature: no loop, branch or flare spans more of the lens range than the cover's resolution." + (small ? " " + small + " small features were left out." : "")]));
      return;
    }
    section.appendChild(el("p", { "class": "hint" }, ["Choose one to ring its nodes in the graph and list the columns that set its rows apart. " + (small ? small + " small features (below the resolution threshold) are not listed." : "")]));
    var list = el("ul", { "class": "features" }), detail = el("div", { id: "feature-detail", "aria-live": "polite" });
    DATA.features.forEach(function (f, i) {
      var b = el("button", { type: "button", "aria-pressed": "false", "data-feature": i }, [f.label + " · " + f.rows.toLocaleString("en-US") + " rows · significance " + fmt(f.significance, 2)]);
      b.addEventListener("click", function () { chooseFeature(i === state.feature ? null : i, list, detail); });
      list.appendChild(el("li", {}, [b]));
    });
    section.appendChild(list); section.appendChild(detail);
    if (sig) section.appendChild(el("p", { "class": "hint" }, [Object.keys(sig).map(function (k) { return k.replace("_", " ") + " " + sig[k].significant + " (+" + sig[k].small + " small)"; }).join(" · ")]));
  }
  function chooseFeature(i, list, detail) {
    state.feature = i;
    var btns = list.querySelectorAll("button");
    for (var j = 0; j < btns.length; j++) btns[j].setAttribute("aria-pressed", String(+btns[j].dataset.feature === i));
    circles.forEach(function (c) { c.classList.remove("in-feature"); });
    document.getElementById("graph").classList.toggle("highlighting", i !== null);
    detail.innerHTML = "";
    if (i === null) return;
    var f = DATA.features[i];
    f.nodes.forEach(function (v) { circles[v].classList.add("in-feature"); });
    detail.appendChild(el("h3", {}, [f.label + ": nodes " + f.nodes.join(", ")]));
    var ranges = Object.keys(f.lens_range).map(function (k) { return k + " " + fmt(f.lens_range[k][0]) + " … " + fmt(f.lens_range[k][1]); }).join("; ");
    detail.appendChild(el("p", { "class": "hint" }, ["Lens range " + ranges + (f.attached_to !== null && f.attached_to !== undefined ? "; attached to node " + f.attached_to : "")]));
    if (f.contrast) detail.appendChild(contrastTable(f.contrast, "The feature's rows against every other row." + sampleNote()));
  }

  // ------------------------------------------------------------ screen
  var LABELS = { rank: "rank", column: "lens column", merit: "merit", robust_spread: "robust spread", smoothness: "smoothness",
    structure: "structure", significant_loops: "sig. loops", significant_branches: "sig. branches", preservation: "R_NX", pair_merit: "pair merit" };
  function buildScreen(section) {
    var S = DATA.screen;
    section.appendChild(el("h2", {}, ["Lens screen"]));
    var p = el("p", {}, ["Chosen: "]);
    S.selected.forEach(function (s) { p.appendChild(el("span", { "class": "chip" }, [s])); });
    p.appendChild(document.createTextNode(" (" + S.stop_text + ")"));
    section.appendChild(p);
    if (S.pair_ties && S.pair_ties.length) {
      var ties = el("p", { id: "pair-ties" }, ["As good within the error (the data do not tell these pairs apart from the chosen one: neighbour preservation x structure within 2 standard errors): "]);
      S.pair_ties.forEach(function (t) { ties.appendChild(el("span", { "class": "chip tie" }, [t.join(" + ")])); });
      section.appendChild(ties);
    }
    if (S.data_notes && S.data_notes.length) section.appendChild(el("p", { "class": "hint", id: "data-notes" }, ["Data: " + S.data_notes.join("; ") + "."]));
    var fields = S.fields.concat(["reason"]), rows = S.ranking.slice(), sortKey = "rank", asc = true;
    var wrap = el("div", { "class": "table-wrap" }), t = el("table", { id: "ranking" });
    t.appendChild(el("caption", { "class": "muted", style: "text-align:left" }, ["Every candidate with its scores and the reason for the decision; chosen lenses shaded. Sort by a column with its header button."]));
    var head = el("tr");
    fields.forEach(function (f) {
      var th = el("th", { scope: "col", "class": f === "column" || f === "reason" ? "text" : "" });
      if (f === "reason") th.textContent = "reason";
      else th.appendChild(el("button", { type: "button", "data-key": f, onclick: function () { asc = sortKey === f ? !asc : f === "rank" || f === "column"; sortKey = f; render(); } }, [LABELS[f] || f]));
      head.appendChild(th);
    });
    t.appendChild(el("thead", {}, [head]));
    var body = el("tbody"); t.appendChild(body); wrap.appendChild(t); section.appendChild(wrap);
    function render() {
      rows.sort(function (a, b) {
        var x = a[sortKey], y = b[sortKey];
        if (x === y) return a.rank - b.rank;
        if (x === null || x === undefined) return 1;
        if (y === null || y === undefined) return -1;
        return (x < y ? -1 : 1) * (asc ? 1 : -1);
      });
      var ths = head.querySelectorAll("th");
      for (var j = 0; j < ths.length; j++) ths[j].setAttribute("aria-sort", fields[j] === sortKey ? (asc ? "ascending" : "descending") : "none");
      body.innerHTML = "";
      rows.forEach(function (r) {
        var tr = el("tr", { "class": r.selected ? "chosen" : "" });
        fields.forEach(function (f) {
          var cls = f === "column" ? "text name" : f === "reason" ? "reason" : "";
          tr.appendChild(el("td", { "class": cls }, [f === "column" || f === "reason" ? String(r[f]) : fmt(r[f])]));
        });
        body.appendChild(tr);
      });
    }
    render();
    if (S.sheet) {
      var d = el("details", { id: "sheet" });
      d.appendChild(el("summary", {}, ["The screen's figure sheet (histograms, lens colouring of the first two principal coordinates, Spearman map, ranking)"]));
      d.appendChild(el("figure", {}, [el("img", { src: S.sheet, alt: "Figure sheet of the lens screen: one card per candidate lens, the Spearman correlation map with the chosen lenses outlined, and the ranking with its reasons (the same facts as the table above)." })]));
      section.appendChild(d);
    }
  }

  // ------------------------------------------------------------ node table (text alternative)
  function buildNodeTable(section) {
    section.appendChild(el("h2", { id: "nodes-heading" }, ["Nodes"]));
    section.appendChild(el("p", { "class": "hint" }, ["The graph as a table: one row per node, with the colouring column. Choose a node to open its panel."]));
    var limit = Math.min(G.n_nodes, 400);
    var head = ["node", "rows"].concat(G.lens_columns.map(function (c) { return c + " mean"; }));
    var wrap = el("div", { "class": "table-wrap" }), t = el("table", { id: "node-table", "aria-labelledby": "nodes-heading" });
    var tr = el("tr");
    head.forEach(function (h, j) { tr.appendChild(el("th", { scope: "col", "class": j === 0 ? "text" : "" }, [h])); });
    tr.appendChild(el("th", { scope: "col", id: "colour-head" }, ["colour"]));
    t.appendChild(el("thead", {}, [tr]));
    var body = el("tbody");
    function addRows(from, to) {
      for (var v = from; v < to; v++) {
        (function (v) {
          var row = el("tr");
          row.appendChild(el("td", { "class": "text" }, [el("button", { type: "button", "data-node": v, "aria-label": "Open node " + v, onclick: function () { selectNode(v, true); } }, ["node " + v])]));
          row.appendChild(el("td", {}, [G.size[v].toLocaleString("en-US")]));
          G.lens_columns.forEach(function (c) { row.appendChild(el("td", {}, [fmt(G.lens[c].mean[v])])); });
          row.appendChild(el("td", { "class": "colour", "data-node": v }, [""]));
          body.appendChild(row);
        })(v);
      }
    }
    addRows(0, limit);
    t.appendChild(body); wrap.appendChild(t); section.appendChild(wrap);
    if (limit < G.n_nodes) {
      var more = el("button", { type: "button", onclick: function () { addRows(limit, G.n_nodes); more.remove(); applyColour(); } }, ["Show all " + G.n_nodes.toLocaleString("en-US") + " nodes"]);
      section.appendChild(more);
    }
  }

  // ------------------------------------------------------------ provenance
  function buildProvenance(section) {
    var P = DATA.provenance, inp = P.input || {};
    var d = el("details", { id: "provenance" });
    d.appendChild(el("summary", {}, ["Provenance: settings, seed, version, input checksum"]));
    var facts = el("dl", { "class": "facts" });
    function fact(k, v) { if (v === null || v === undefined || v === "") return; facts.appendChild(el("dt", {}, [k])); facts.appendChild(el("dd", {}, [String(v)])); }
    fact("lenswork version", P.lenswork_version + (P.graph_built_by && P.graph_built_by !== P.lenswork_version ? " (graph built by " + P.graph_built_by + ")" : ""));
    fact("input", inp.source || inp.path);
    fact("input SHA-256", inp.sha256);
    fact("rows used", inp.n_rows_used);
    fact("scaling", inp.scaling ? inp.scaling.method : "none");
    fact("seed", P.seed);
    fact("values shown in", P.units);
    d.appendChild(facts);
    d.appendChild(el("h3", {}, ["Graph settings"]));
    d.appendChild(el("pre", {}, [JSON.stringify({ settings: P.graph_settings, auto: P.auto_settings, lenses: P.lenses }, null, 1)]));
    if (P.screen_settings) { d.appendChild(el("h3", {}, ["Screen settings"])); d.appendChild(el("pre", {}, [JSON.stringify(P.screen_settings, null, 1)])); }
    d.appendChild(el("h3", {}, ["Graph summary"]));
    d.appendChild(el("pre", {}, [G.summary]));
    section.appendChild(d);
  }

  // ------------------------------------------------------------ page
  function init() {
    var main = document.getElementById("main");
    main.innerHTML = "";
    document.getElementById("lede").textContent = G.n_nodes.toLocaleString("en-US") + " nodes and " + G.n_edges.toLocaleString("en-US") + " edges over " + G.n_rows.toLocaleString("en-US") + " rows (" + G.unassigned.toLocaleString("en-US") + " in no node), lenses " + G.lens_columns.join(" × ") + "; " + DATA.features.length + " significant feature" + (DATA.features.length === 1 ? "" : "s") + ".";
    var gs = el("section", { id: "graph-section", "aria-labelledby": "graph-heading" });
    gs.appendChild(el("h2", { id: "graph-heading" }, ["Graph"]));
    var controls = el("div", { "class": "controls" });
    var sel = el("select", { id: "color-by" }), choices = colourChoices();
    choices.forEach(function (c) { sel.appendChild(el("option", { value: c.key }, [c.label])); });
    var lev = el("select", { id: "color-level" });
    var levLabel = el("label", { id: "color-level-label" }, ["Level", lev]);
    controls.appendChild(el("label", {}, ["Colour nodes by", sel]));
    controls.appendChild(levLabel);
    var zoom = el("div", { "class": "zoom", role: "group", "aria-label": "Zoom" });
    controls.appendChild(zoom);
    gs.appendChild(controls);
    var host = el("div", { "class": "graph-wrap" });
    gs.appendChild(host);
    var pz = buildGraph(host);
    [["+", "Zoom in", pz.zoomIn], ["−", "Zoom out", pz.zoomOut], ["Reset view", "Reset pan and zoom", pz.reset]].forEach(function (b) {
      zoom.appendChild(el("button", { type: "button", "aria-label": b[1], title: b[1], onclick: b[2] }, [b[0]]));
    });
    gs.appendChild(svgLegend());
    gs.appendChild(el("p", { "class": "hint" }, ["Drag to pan, scroll to zoom; click a node for its panel. Node area follows its rows, edge width the rows two nodes share. Layout: " + ({ lens: "each node at its two lens means", level: "height = the node's mean lens value", spring: "force-directed", spectral: "spectral (Laplacian eigenvectors)" }[G.layout.method] || G.layout.method) + "."]));
    main.appendChild(gs);
    var panel = el("aside", { id: "node-panel", "class": "panel", "aria-live": "polite", "aria-label": "Node details" }, [el("h2", {}, ["Node details"]), el("p", { "class": "muted" }, ["Click a node in the graph, or choose one in the node table, to see its size, lens ranges, the columns that set it apart and its members."])]);
    main.appendChild(panel);
    var fs = el("section", { id: "features-section", "class": "wide" }); buildFeatures(fs); main.appendChild(fs);
    if (DATA.screen) { var ss = el("section", { id: "screen-section", "class": "wide" }); buildScreen(ss); main.appendChild(ss); }
    var ns = el("section", { id: "nodes-section", "class": "wide" }); buildNodeTable(ns); main.appendChild(ns);
    var ps = el("section", { id: "provenance-section", "class": "wide" }); buildProvenance(ps); main.appendChild(ps);
    function levels() {
      var key = sel.value, c = key.indexOf("col:") === 0 ? column(key.slice(4)) : null;
      lev.innerHTML = "";
      if (c && c.type === "categorical") {
        c.levels.forEach(function (l) { lev.appendChild(el("option", { value: l }, [l])); });
        levLabel.style.display = ""; state.level = c.levels[0];
      } else { levLabel.style.display = "none"; state.level = null; }
    }
    sel.addEventListener("change", function () { state.color = sel.value; levels(); applyColour(); });
    lev.addEventListener("change", function () { state.level = lev.value; applyColour(); });
    state.color = G.lens_columns.length ? "lens:" + G.lens_columns[0] : "size";
    sel.value = state.color; levels(); applyColour();
    main.setAttribute("aria-busy", "false");
    document.documentElement.setAttribute("data-ready", "true");
    window.lensworkReport = { readyAt: performance.now(), selectNode: selectNode, membersCsv: membersCsv, decodeMembers: decodeMembers };
  }
  function svgLegend() { return svg("svg", { id: "legend", viewBox: "0 0 330 46", role: "img" }); }
  init();
})();
