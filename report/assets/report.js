// The page script of trueup's report: decodes the embedded data (gzip,
// base64, float32 byte planes; see report.go) and draws the charts with
// uPlot. window.trueupReport exposes the state that tests and the
// benchmark read.
"use strict";
(async function () {
  const api = { ready: false, error: null, selected: -1, select: null, timings: {} };
  window.trueupReport = api;
  const t0 = performance.now();
  const css = getComputedStyle(document.documentElement);
  const color = name => css.getPropertyValue(name).trim();

  function bytes(id) {
    const s = atob(document.getElementById(id).textContent.trim());
    const u = new Uint8Array(s.length);
    for (let i = 0; i < s.length; i++) u[i] = s.charCodeAt(i);
    return u;
  }
  async function gunzip(u) {
    const stream = new Blob([u]).stream().pipeThrough(new DecompressionStream("gzip"));
    return new Uint8Array(await new Response(stream).arrayBuffer());
  }

  let meta, all;
  try {
    meta = JSON.parse(new TextDecoder().decode(await gunzip(bytes("meta"))));
    const raw = await gunzip(bytes("series"));
    const n = raw.length / 4;
    all = new Float32Array(n);
    const b = new Uint8Array(all.buffer);
    for (let i = 0; i < n; i++) {
      b[4 * i] = raw[i]; b[4 * i + 1] = raw[n + i]; b[4 * i + 2] = raw[2 * n + i]; b[4 * i + 3] = raw[3 * n + i];
    }
  } catch (e) {
    api.error = String(e);
    document.getElementById("loading").textContent = "This report's data could not be decoded: " + e;
    document.getElementById("loading").className = "error";
    return;
  }
  api.timings.decode = performance.now() - t0;

  const N = meta.nodes.length, T = meta.history.length, H = meta.forecast.length, K = meta.lags;
  const labels = meta.history.concat(meta.forecast);
  let off = 0;
  const field = len => { const f = all.subarray(off, off + len); off += len; return f; };
  const S = { history: field(N * T), base: field(N * H), forecast: field(N * H), lower: [], upper: [] };
  if (meta.z) S.sd = field(N * H);
  else for (let l = 0; l < meta.intervals.length; l++) { S.lower.push(field(N * H)); S.upper.push(field(N * H)); }
  S.acf = field(N * K); S.pacf = field(N * K);
  // bounds returns interval l's lower and upper bounds of node i, from
  // the embedded bounds or from forecast ∓ z·sd (see compactBounds).
  function bounds(l, i) {
    if (!meta.z) return [slice(S.lower[l], i, H), slice(S.upper[l], i, H)];
    const lo = [], hi = [], z = meta.z[meta.nodes[i].level][l];
    for (let k = 0; k < H; k++) {
      const f = S.forecast[i * H + k], sd = S.sd[i * H + k];
      if (Number.isNaN(f) || Number.isNaN(sd)) { lo.push(null); hi.push(null); continue; }
      lo.push(meta.clamp_at_zero ? Math.max(0, f - z * sd) : f - z * sd);
      hi.push(f + z * sd);
    }
    return [lo, hi];
  }

  const run = meta.run || {}, counts = run.counts || {};
  // The value axis says what the numbers are: the value column, per period.
  const unit = ((run.input && run.input.value_column) || "sales") + " per " + (counts.grain || "period");
  const nf0 = new Intl.NumberFormat("en-GB", { maximumFractionDigits: 0 });
  const nf2 = new Intl.NumberFormat("en-GB", { maximumFractionDigits: 2 });
  // Table cells: always two decimals, so a column reads alike.
  const nf2fixed = new Intl.NumberFormat("en-GB", { minimumFractionDigits: 2, maximumFractionDigits: 2 });
  const fmt = v => v == null || Number.isNaN(v) ? "–" : (Math.abs(v) >= 100 ? nf0 : nf2).format(v);
  // legendValue is fmt for a chart's legend, which is blank until the
  // pointer is over a period rather than showing a dash.
  const legendValue = v => v == null || Number.isNaN(v) ? "" : fmt(v);
  const short = v => {
    const a = Math.abs(v);
    if (a >= 1e9) return nf2.format(v / 1e9) + " bn";
    if (a >= 1e6) return nf2.format(v / 1e6) + " m";
    if (a >= 1e4) return nf2.format(v / 1e3) + " k"; // 12,500 is 12.5 k, not 13 k
    return nf2.format(v);
  };
  const el = (tag, attrs, ...kids) => {
    const e = document.createElement(tag);
    for (const [k, v] of Object.entries(attrs || {})) {
      if (k === "class") e.className = v; else if (k.startsWith("on")) e.addEventListener(k.slice(2), v); else e.setAttribute(k, v);
    }
    for (const k of kids) e.append(k instanceof Node ? k : String(k));
    return e;
  };
  // nodeName is the node's one name, as every table and command gives it
  // (region=North store=N01, total): report/data.go makes it.
  const nodeName = i => meta.nodes[i].label;
  // pValue writes a p-value as a plain decimal; below 0.0001 it says so.
  const pValue = p => p < 1e-4 ? "< 0.0001" : p.toFixed(4);
  // seriesColours gives each labelled series of a chart its colour: the
  // base forecasts keep their colour from the forecast charts, and the
  // others take the rest of the palette in turn.
  const seriesColours = names => {
    const palette = [color("--forecast"), color("--history"), "#5b3f9e", "#2f6db3", "#8a1c1c", "#6b6b00"];
    let next = 0;
    return names.map(n => n === "base" ? color("--base") : palette[next++ % palette.length]);
  };
  api.format = { short, pValue, unit, seriesColours }; // for the browser test
  const levelName = i => meta.levels[meta.nodes[i].level].name;
  const slice = (f, i, len) => Array.from(f.subarray(i * len, (i + 1) * len), v => Number.isNaN(v) ? null : v);

  // seriesData returns the x positions and the series of node i on the
  // history-then-forecast axis: history, base, forecast, then per interval
  // (widest first) upper and lower.
  function seriesData(i) {
    const x = labels.map((_, t) => t);
    const pad = new Array(T).fill(null), tail = new Array(H).fill(null);
    const hist = slice(S.history, i, T).concat(tail);
    const cols = [x, hist, pad.concat(slice(S.base, i, H)), pad.concat(slice(S.forecast, i, H))];
    for (let l = meta.intervals.length - 1; l >= 0; l--) {
      const [lo, hi] = bounds(l, i);
      cols.push(pad.concat(hi), pad.concat(lo));
    }
    return cols;
  }

  // Ticks at least one label apart (daily labels are wider than monthly).
  const xSpace = Math.max(64, 7 * Math.max(0, ...labels.map(l => String(l).length)) + 16);
  const xAxis = { values: (u, splits) => splits.map(t => labels[t] ?? ""), space: xSpace, incrs: [1, 2, 3, 4, 6, 12, 24, 36, 52, 104, 365], grid: { stroke: "#e6e9ee" } };
  function tsOptions(width, height, compact) {
    const series = [{ label: "period", value: (u, t) => t == null ? "" : labels[t] },
      { label: "history", stroke: color("--history"), width: 1.5, value: (u, v) => legendValue(v) },
      { label: "base forecast", stroke: color("--base"), width: 1.25, dash: [5, 4], value: (u, v) => legendValue(v), show: !compact },
      { label: "reconciled forecast", stroke: color("--forecast"), width: 2, value: (u, v) => legendValue(v) }];
    const bands = [];
    for (let l = meta.intervals.length - 1; l >= 0; l--) {
      const wide = l === meta.intervals.length - 1 && meta.intervals.length > 1;
      const fill = color(wide ? "--band95" : "--band80"), edge = color(wide ? "--band95-edge" : "--band80-edge");
      const at = series.length;
      series.push({ label: meta.intervals[l] + "% interval", stroke: edge, width: 1, points: { show: false }, value: (u, v) => legendValue(v) },
        { label: meta.intervals[l] + "% lower", stroke: edge, width: 1, points: { show: false }, value: (u, v) => legendValue(v) });
      bands.push({ series: [at, at + 1], fill });
    }
    return {
      width, height, series, bands, scales: { x: { time: false } },
      legend: { show: !compact }, cursor: { drag: { x: false, y: false } },
      axes: [xAxis, { values: (u, s) => s.map(short), size: 64, label: compact ? undefined : unit, grid: { stroke: "#e6e9ee" } }],
      hooks: { ready: [u => { // one legend entry per interval: the lower bound's row is hidden
        const rows = u.root.querySelectorAll(".u-legend .u-series");
        for (let s = 5; s < u.series.length; s += 2) if (rows[s]) rows[s].style.display = "none";
      }] },
    };
  }
  const charts = [];
  function draw(target, opts, data) {
    if (target.uplot) { charts.splice(charts.indexOf(target.uplot), 1); target.uplot.destroy(); }
    target.textContent = "";
    const u = new uPlot(opts, data, target);
    target.uplot = u;
    charts.push(u);
    return u;
  }
  const width = e => Math.max(280, Math.floor(e.getBoundingClientRect().width || 900));

  // What was run.
  const facts = document.getElementById("run-facts");
  const opts = run.options || {};
  const fact = (k, v) => { if (v !== undefined && v !== null && v !== "") facts.append(el("dt", {}, k), el("dd", {}, v)); };
  fact("Command", run.command ? "trueup " + run.command : undefined);
  if (run.input) {
    const file = String(run.input.path || "").split(/[\\/]/).pop();
    const sha = run.input.sha256 ? `, SHA-256 ${String(run.input.sha256).slice(0, 12)}…` : "";
    fact("Input", el("span", { title: run.input.path }, `${file} (${nf0.format(run.input.rows)} rows${sha})`));
  }
  fact("History", counts.first_period ? `${counts.first_period} to ${counts.last_period} (${counts.periods} ${counts.grain || "period"}s)` : undefined);
  if (H) fact("Forecast", `${meta.forecast[0]} to ${meta.forecast[H - 1]} (${H} periods ahead), intervals ${meta.intervals.map(l => l + "%").join(" and ")}`);
  if (N) fact("Structure", `${nf0.format(N)} nodes in ${meta.levels.length} levels: ` + meta.levels.map(l => `${l.name} ${nf0.format(l.nodes.length)}`).join(", "));
  if (Array.isArray(run.origins) && run.origins.length) fact("Backtest", `${run.origins.length} origins (first forecast periods ${run.origins.map(o => o.first_forecast_period).join(", ")}); methods compared: ${(run.methods || []).join(", ")}`);
  if (run.models) fact("Models chosen", Object.entries(run.models).sort().map(([k, v]) => `${k} ${v}`).join(", ") + (opts.family ? ` (family option: ${opts.family})` : ""));
  if (run.reconcile) {
    const notes = Object.entries(run.reconcile.notes || {}).map(([k, v]) => `${k} ${nf2.format(v)}`).join(", ");
    // The explanation comes from run.json, which takes it from the one
    // table of methods (reconcile.Methods).
    const why = run.reconcile.explanation || "the method named in the run's options";
    fact("Reconciliation", `${run.reconcile.method}${opts.cov ? " (covariance " + opts.cov + ")" : ""}${opts.nonnegative ? ", non-negative" : ""}: ${why}${notes ? "; " + notes : ""}`);
  }
  const locks = run.locks;
  if (locks && Array.isArray(locks.rows)) {
    const file = String(locks.path || "").split(/[\\/]/).pop();
    fact("Locks", el("span", { title: locks.path }, `${nf0.format(locks.rows.length)} locked forecasts from ${file}`));
  }
  if (run.warnings && run.warnings.length) fact("Warnings", el("ul", {}, ...run.warnings.map(w => el("li", { class: "warning" }, w))));

  // Locked forecasts (run.json's "locks", see engine.LocksReport): each
  // lock beside the forecast without locks, and how far the locks moved
  // the other forecasts of each level.
  if (locks && Array.isArray(locks.rows) && locks.rows.length) {
    const sec = document.getElementById("locks");
    sec.hidden = false;
    const box = document.getElementById("locks-tables");
    const table = (head, rows) => el("div", { class: "scroll" }, el("table", {},
      el("tr", {}, ...head.map((h, j) => el("th", { class: j > 1 ? "num" : "" }, h))),
      ...rows.map(r => el("tr", {}, ...r.map((v, j) => el("td", { class: j > 1 ? "num" : "" }, v))))));
    const signed = v => (v > 0 ? "+" : "") + fmt(v);
    box.append(el("h3", {}, "The locks"), table(["node", "period", "locked value", "without locks", "change"],
      locks.rows.map(r => [r.node, r.period, fmt(r.value), fmt(r.unlocked_forecast), signed(r.value - r.unlocked_forecast)])));
    const pct = v => nf2.format(100 * v) + "%";
    box.append(el("h3", {}, "How far the locks moved the other forecasts"),
      el("p", { class: "note" }, "Per level, over every forecast period and node that is not locked: the mean absolute change from the forecast without locks, the change as a share of those forecasts, and the largest change."),
      table(["level", "largest change at", "forecasts", "mean change", "share", "largest change"],
        (locks.moved_by_level || []).map(m => [m.level, m.max_node ? `${m.max_node}, ${m.max_period}` : "–", nf0.format(m.forecasts),
          fmt(m.mean_abs_change), pct(m.relative_change), fmt(m.max_abs_change)])));
    sec.dataset.locks = String(locks.rows.length);
  }

  // Forecast sections: left out for a backtest's folder, which has no forecasts.
  if (N > 0) {
    // The total.
    const totalLevel = meta.levels.findIndex(l => l.name === "total");
    const totalNode = meta.levels[totalLevel >= 0 ? totalLevel : 0].nodes[0];
    document.getElementById("total-title").textContent = `${nodeName(totalNode)}: history and forecast with ${meta.intervals.map(l => l + "%").join(" and ")} intervals`;
    const totalEl = document.getElementById("total-chart");
    draw(totalEl, tsOptions(width(totalEl), 340, false), seriesData(totalNode));
    totalEl.dataset.forecastPoints = String(slice(S.forecast, totalNode, H).filter(v => v != null).length);

    // Small multiples: the largest nodes of each level below the total.
    const TOP = 6;
    const grids = document.getElementById("level-grids");
    meta.levels.forEach((lv, l) => {
      if (lv.nodes.length === 1 && l === (totalLevel >= 0 ? totalLevel : 0)) return;
      grids.append(el("h3", {}, `${lv.name}: ${nf0.format(lv.nodes.length)} nodes` + (lv.nodes.length > TOP ? ` (largest ${TOP} shown)` : "")));
      const grid = el("div", { class: "grid" });
      grids.append(grid);
      for (const i of lv.nodes.slice(0, TOP)) {
        const box = el("div", { class: "chart" });
        grid.append(el("div", { class: "cell" }, el("button", { onclick: () => select(i, true) }, nodeName(i)), box));
        draw(box, tsOptions(330, 170, true), seriesData(i));
      }
      if (lv.nodes.length > TOP) {
        const pick = el("select", { "aria-label": "all nodes of " + lv.name });
        pick.append(el("option", { value: "" }, `All ${nf0.format(lv.nodes.length)} nodes of ${lv.name}, largest first…`));
        const fillOptions = () => { // filled on first use: a level can have tens of thousands of nodes
          if (pick.options.length > 1) return;
          const frag = document.createDocumentFragment();
          for (const i of lv.nodes) frag.append(el("option", { value: i }, nodeName(i)));
          pick.append(frag);
        };
        pick.addEventListener("focus", fillOptions);
        pick.addEventListener("mousedown", fillOptions);
        pick.addEventListener("change", () => { if (pick.value !== "") select(+pick.value, true); });
        grids.append(el("div", { class: "level-more" }, pick));
      }
    });

    // Any node.
    const lowerNames = meta.nodes.map((_, i) => (nodeName(i) + " " + levelName(i)).toLowerCase());
    const byVolume = meta.nodes.map((_, i) => i).sort((a, b) => meta.nodes[b].volume - meta.nodes[a].volume || a - b);
    const search = document.getElementById("search"), matches = document.getElementById("matches");
    let found = [];
    function find() {
      const words = search.value.toLowerCase().split(/\s+/).filter(Boolean);
      found = [];
      if (words.length) for (const i of byVolume) {
        if (words.every(w => lowerNames[i].includes(w))) found.push(i);
        if (found.length === 30) break;
      }
      matches.replaceChildren(...found.map((i, k) => el("li", { role: "option", class: k === 0 ? "active" : "", onclick: () => { select(i, false); matches.replaceChildren(); } },
        nodeName(i) + " ", el("small", {}, levelName(i)))));
    }
    search.addEventListener("input", find);
    let active = 0; // the highlighted match: arrow keys move it, Enter opens it
    const highlight = k => {
      active = Math.max(0, Math.min(found.length - 1, k));
      matches.querySelectorAll("li").forEach((li, j) => li.classList.toggle("active", j === active));
      const li = matches.children[active];
      if (li) li.scrollIntoView({ block: "nearest" });
    };
    search.addEventListener("input", () => { active = 0; });
    search.addEventListener("keydown", e => {
      if (e.key === "ArrowDown" || e.key === "ArrowUp") { e.preventDefault(); highlight(active + (e.key === "ArrowDown" ? 1 : -1)); }
      if (e.key === "Enter" && found.length) { select(found[active] ?? found[0], false); matches.replaceChildren(); }
      if (e.key === "Escape") matches.replaceChildren();
    });

    function corrChart(target, name, f, i) {
      const nres = meta.nodes[i].n_resid;
      const vals = slice(f, i, K);
      const k = vals.findIndex(v => v == null);
      const len = k < 0 ? K : k;
      target.textContent = "";
      if (len < 1) { target.append(el("p", { class: "note" }, `No ${name}: too few residuals.`)); return; }
      const bound = 1.96 / Math.sqrt(nres);
      const x = Array.from({ length: len }, (_, j) => j + 1);
      const top = Math.min(1, 1.25 * Math.max(bound, ...vals.slice(0, len).map(Math.abs)));
      draw(target, {
        width: width(target), height: 200, title: `${name} of the residuals`, scales: { x: { time: false, range: [0.5, len + 0.5] }, y: { range: [-top, top] } },
        series: [{ label: "lag", value: (u, v) => v == null ? "" : v }, { label: name, stroke: color("--forecast"), fill: color("--band80"), paths: uPlot.paths.bars({ size: [0.6, 14] }), points: { show: false }, value: (u, v) => v == null ? "" : v.toFixed(3) },
          { label: "±1.96/√n", stroke: color("--alert"), dash: [4, 4], width: 1, points: { show: false }, value: () => bound.toFixed(3) },
          { label: "", stroke: color("--alert"), dash: [4, 4], width: 1, points: { show: false }, value: () => "" }],
        axes: [{ label: "lag", incrs: [1, 2, 3, 4, 6, 12], grid: { show: false } }, { size: 44, grid: { stroke: "#e6e9ee" } }],
        hooks: { ready: [u => { const r = u.root.querySelectorAll(".u-legend .u-series"); if (r[3]) r[3].style.display = "none"; }] },
      }, [x, vals.slice(0, len), x.map(() => bound), x.map(() => -bound)]);
    }

    // planTable shows node i's totals by plan period (the plans table):
    // actuals already past plus the forecasts of the rest.
    function planTable(i) {
      const p = meta.plans, nd = p.nodes[i], num = v => v == null ? "–" : fmt(v);
      const head = el("tr", {}, ...["period", "actual", "forecast", "total", ...p.intervals.map(l => l + "% interval")].map((c, j) => el("th", { class: j ? "num" : "" }, c)));
      const rows = p.periods.map((label, k) => {
        const a = nd.a[k], f = nd.f[k];
        const cells = [label, `${num(a)} (${p.periods_actual[k]})`, `${num(f)} (${p.periods_forecast[k]})`, a == null || f == null ? "–" : fmt(a + f)];
        p.intervals.forEach((_, l) => cells.push(`${num(nd.lo[l][k])} – ${num(nd.hi[l][k])}`));
        return el("tr", {}, ...cells.map((c, j) => el("td", { class: j ? "num" : "" }, c)));
      });
      return [el("h3", {}, "Plan totals"), el("div", { class: "scroll" }, el("table", {}, head, ...rows)),
        el("p", { class: "note" }, "Actuals of the periods already past plus the reconciled forecasts of the rest (the number of periods of each in brackets); the interval is the total's, from the forecast part.")];
    }

    function select(i, scroll) {
      const start = performance.now();
      const nd = meta.nodes[i];
      api.selected = i;
      // The total's name is its level's; any other node's heading adds its level.
      document.getElementById("node-title").textContent = nodeName(i) === levelName(i) ? nodeName(i) : `${nodeName(i)} (${levelName(i)})`;
      const chart = document.getElementById("node-chart");
      draw(chart, tsOptions(width(chart), 320, false), seriesData(i));
      chart.dataset.node = String(i);
      const model = document.getElementById("node-model");
      const rows = [["Model", nd.family ? `${nd.family}: ${nd.spec}` : "none (base forecasts given)"],
        ["AICc", nd.aicc == null ? "–" : nf2.format(nd.aicc)],
        [`Innovation variance (${nd.variance_scale || "data"} scale)`, nd.sigma2 == null ? "–" : fmt(nd.sigma2)]];
      if (nd.status) rows.unshift(["Status", nd.status]);
      let params = null;
      try { params = nd.params ? JSON.parse(nd.params) : null; } catch (e) { params = null; }
      const table = el("table", {}, ...rows.map(([k, v]) => el("tr", {}, el("th", {}, k), el("td", {}, v))));
      if (params && Array.isArray(params.estimates)) {
        for (const e of params.estimates) table.append(el("tr", {}, el("th", {}, e.name ?? e.Name ?? "estimate"), el("td", { class: "num" }, typeof (e.value ?? e.Value) === "number" ? (e.value ?? e.Value).toPrecision(6) : JSON.stringify(e))));
      }
      const nodeBounds = meta.intervals.map((_, l) => bounds(l, i));
      const fcRows = meta.forecast.map((p, k) => {
        const cells = [p, fmt(S.base[i * H + k]), fmt(S.forecast[i * H + k])];
        nodeBounds.forEach(([lo, hi]) => cells.push(`${fmt(lo[k])} – ${fmt(hi[k])}`));
        return el("tr", {}, ...cells.map((c, j) => el("td", { class: j ? "num" : "" }, c)));
      });
      const head = el("tr", {}, ...["period", "base", "forecast", ...meta.intervals.map(l => l + "% interval")].map((c, j) => el("th", { class: j ? "num" : "" }, c)));
      model.replaceChildren(el("h3", {}, "Model"), table,
        ...(nd.warning ? [el("p", { class: "warning" }, "Warning: " + nd.warning)] : []),
        ...(params ? [el("details", {}, el("summary", {}, "All parameters (JSON)"), el("pre", { class: "scroll" }, JSON.stringify(params, null, 1)))] : []));
      const check = model;
      document.getElementById("node-check").replaceChildren(el("h3", {}, "Forecasts"), el("div", { class: "scroll" }, el("table", {}, head, ...fcRows)));
      if (meta.plans) document.getElementById("node-check").append(...planTable(i));
      check.append(el("h3", {}, "Ljung–Box test of the residuals"));
      if (nd.lb_p == null) check.append(el("p", { class: "note" }, "Not run: too few residuals."));
      else {
        const pass = nd.lb_p >= meta.fail_p;
        check.append(el("p", {}, `Q = ${nd.lb_q.toFixed(2)} on ${nd.lb_lags} lags, p-value ${pValue(nd.lb_p)}: `,
          el("span", { class: pass ? "pass" : "fail" }, pass ? "no autocorrelation left at the 5% level" : "autocorrelation left in the residuals at the 5% level")),
        el("p", { class: "note" }, `A failing test means the model missed a pattern; its intervals may be too narrow. Bars beyond the dashed lines (±1.96/√n, n = ${nd.n_resid} residuals) show where.`));
      }
      check.append(el("p", { class: "note" }, "ACF: the correlation of the residuals with themselves k periods (lags) earlier. " +
        "PACF: the same correlation once the shorter lags are accounted for. A bar at lag 12 of monthly data beyond the dashed lines " +
        "means a yearly pattern the model left in its errors."));
      corrChart(document.getElementById("node-acf"), "ACF", S.acf, i);
      corrChart(document.getElementById("node-pacf"), "PACF", S.pacf, i);
      if (scroll) document.getElementById("explorer").scrollIntoView();
      api.timings.select = performance.now() - start;
    }
    api.select = select;
    api.nodeName = nodeName;
    api.nodeCount = N;

    // Residual checks.
    const failing = document.getElementById("failing");
    if (!K) failing.append(el("p", { class: "note" }, "No residuals in this run's tables, so no checks."));
    else {
      failing.append(el("p", {}, `${nf0.format(meta.failing.length)} of ${nf0.format(N)} nodes have residuals that fail the Ljung–Box test at the 5% level` + (meta.failing.length > 200 ? " (the 200 with the smallest p-values are listed)." : ".")));
      if (meta.failing.length) failing.append(el("div", { class: "scroll" }, el("table", {},
        el("tr", {}, el("th", {}, "node"), el("th", {}, "level"), el("th", {}, "model"), el("th", { class: "num" }, "Q"), el("th", { class: "num" }, "lags"), el("th", { class: "num" }, "p-value")),
        ...meta.failing.slice(0, 200).map(i => { const nd = meta.nodes[i]; return el("tr", {},
          el("td", {}, el("button", { class: "node-link", onclick: () => select(i, true) }, nodeName(i))), el("td", {}, levelName(i)), el("td", {}, nd.spec || nd.family || ""),
          el("td", { class: "num" }, nd.lb_q.toFixed(2)), el("td", { class: "num" }, nd.lb_lags), el("td", { class: "num" }, pValue(nd.lb_p))); }))));
    }

    select(totalNode, false);
    // A link may name a node: report.html#node=Thornvale opens the largest
    // node whose name and level contain those words.
    const wanted = decodeURIComponent((location.hash.match(/^#node=(.+)$/) || [])[1] || "");
    if (wanted) { search.value = wanted; find(); if (found.length) select(found[0], true); matches.replaceChildren(); }
  } else {
    for (const id of ["total", "levels", "explorer", "diagnostics"]) document.getElementById(id).hidden = true;
  }

  // Accuracy: the backtest's scores and drivers (see accuracy.go) and its
  // recommendation from run.json.
  const acc = Object.fromEntries((meta.accuracy || []).map(tb => [tb.name, tb]));
  if (meta.accuracy && meta.accuracy.length) {
    document.getElementById("accuracy").hidden = false;
    const box = document.getElementById("accuracy-tables");
    const records = tb => tb.rows.map(r => Object.fromEntries(tb.columns.map((c, j) => [c, r[j]])));
    const num = v => v == null ? "–" : nf2fixed.format(v);
    const pct = v => v == null ? "–" : nf0.format(100 * v) + "%";
    const htmlTable = (head, rows) => el("div", { class: "scroll" }, el("table", {},
      el("tr", {}, ...head.map((h, j) => el("th", { class: j ? "num" : "" }, h))),
      ...rows.map(r => el("tr", {}, ...r.map((v, j) => el("td", { class: j ? "num" : "" }, v))))));
    const short24 = s => s.length > 24 ? s.slice(0, 23) + "…" : s;
    // Slanted labels keep up to 44 characters: a node's label names its
    // attributes (region=Saltcoast store=Wrengate category=toys).
    const short44 = s => s.length > 44 ? s.slice(0, 43) + "…" : s;
    // categoryAxis labels one tick per category; when the labels would
    // not fit side by side, they are turned to a slant so none overlaps,
    // and padLeft leaves room for the first label's slant left of the plot.
    const categoryAxis = (cats, target) => {
      const flat = cats.length * (7 * Math.max(0, ...cats.map(c => short24(String(c ?? "")).length)) + 12) <= 0.8 * width(target);
      const cut = flat ? short24 : short44, slant = !flat;
      const longest = Math.max(0, ...cats.map(c => cut(String(c ?? "")).length));
      const first = cut(String(cats[0] ?? "")).length;
      return { values: (u, sp) => sp.map(k => Number.isInteger(k) ? cut(String(cats[k] ?? "")) : ""), incrs: [1], grid: { show: false },
        rotate: slant ? 35 : 0, size: slant ? 20 + 5 * longest : 50, padLeft: slant ? Math.max(0, Math.round(5.5 * first) - 60) : 0 };
    };
    // dotChart draws one dot per category and series (no lines), with
    // optional dashed reference lines.
    function dotChart(target, title, catLabel, cats, series, yLabel, refs, yfmt) {
      const { padLeft, ...xAxis } = categoryAxis(cats, target);
      const colours = seriesColours(series.map(sr => sr.label));
      const x = cats.map((_, k) => k);
      const opts = {
        width: width(target), height: 210 + xAxis.size, title, padding: [null, null, null, padLeft || null], scales: { x: { time: false, range: [-0.5, cats.length - 0.5] } },
        series: [{ label: catLabel, value: (u, k) => k == null ? "" : cats[k] }],
        axes: [xAxis,
          { values: (u, sp) => sp.map(yfmt), size: 60, label: yLabel, grid: { stroke: "#e6e9ee" } }],
      };
      const data = [x];
      series.forEach((sr, j) => {
        opts.series.push({ label: sr.label, stroke: colours[j], width: 0, paths: () => null,
          points: { show: true, size: 9, fill: colours[j] }, value: (u, v) => v == null ? "" : yfmt(v) });
        data.push(sr.values);
      });
      for (const r of refs || []) {
        opts.series.push({ label: r.label, stroke: color("--alert"), dash: [4, 4], width: 1, points: { show: false }, value: () => yfmt(r.value) });
        data.push(x.map(() => r.value));
      }
      draw(target, opts, data);
    }
    function barChart(target, title, names, values, yLabel, yfmt) {
      const { padLeft, ...xAxis } = categoryAxis(names, target);
      draw(target, {
        width: width(target), height: 210 + xAxis.size, title, padding: [null, null, null, padLeft || null], scales: { x: { time: false, range: [-0.5, names.length - 0.5] }, y: { range: (u, lo, hi) => [Math.min(0, lo), Math.max(0, hi) * 1.1 || 1] } },
        series: [{ label: "node", value: (u, k) => k == null ? "" : names[k] },
          { label: yLabel, stroke: color("--forecast"), fill: color("--band80"), paths: uPlot.paths.bars({ size: [0.7, 60] }), points: { show: false }, value: (u, v) => v == null ? "" : yfmt(v) }],
        axes: [xAxis,
          { values: (u, sp) => sp.map(yfmt), size: 60, label: yLabel, grid: { stroke: "#e6e9ee" } }],
      }, [names.map((_, k) => k), values]);
    }
    const rec = run.recommendation;
    if (rec && rec.method) {
      // The backtest states its reason in full; compose one only without it.
      const why = rec.reason || (`Headline MASE ${num(rec.mase)}` + (rec.runner_up ? `, ${num(rec.margin_percent)}% below ${rec.runner_up}` : "") +
        (Number.isFinite(rec.versus_base_percent) ? `, ${num(rec.versus_base_percent)}% better than the base forecasts` : "") + ".");
      box.append(el("p", { class: "caution" }, el("strong", {}, `Recommended reconciliation: ${rec.method}. `),
        why.charAt(0).toUpperCase() + why.slice(1)));
    }
    if (acc.scores) {
      const sc = records(acc.scores);
      const methods = [...new Set(sc.map(r => r.method))];
      const head = sc.filter(r => r.level == null), byLevel = sc.filter(r => r.level != null);
      const levels = [...new Set(byLevel.map(r => r.level))];
      const covCols = acc.scores.columns.filter(c => /^coverage_/.test(c));
      box.append(el("h3", {}, "Scores by method (mean over levels)"),
        htmlTable(["method", "MASE", "RMSSE", "bias", ...covCols.map(c => `${c.slice(9)}% interval coverage`), "CRPS", "energy score"],
          head.map(r => [r.method, num(r.mase), num(r.rmsse), num(r.bias), ...covCols.map(c => pct(r[c])), num(r.crps), num(r.energy_score)])),
        el("p", { class: "note" }, "CRPS scores each node's whole forecast distribution and the energy score the joint forecast of all nodes, both over the node's scale; lower is better. A method whose intervals hold their level with a lower CRPS gives the more useful ranges."));
      if (covCols.length && levels.length) {
        box.append(el("h3", {}, "Interval coverage by level"),
          el("p", { class: "note" }, "The share of actual values inside each interval at each level, over all steps and origins; an 80% interval should hold 80% of them."),
          htmlTable(["level", ...methods.flatMap(m => covCols.map(c => `${m} ${c.slice(9)}%`))],
            levels.map(lv => [lv, ...methods.flatMap(m => covCols.map(c => pct(byLevel.find(r => r.level === lv && r.method === m)?.[c])))])));
      }
      const at = (lv, m, col) => { const r = byLevel.find(r => r.level === lv && r.method === m); return r ? r[col] ?? null : null; };
      if (levels.length) {
        const t1 = el("div", { class: "chart" });
        box.append(el("h3", {}, "MASE by level and method (lower is better)"), t1);
        dotChart(t1, "MASE over all steps and origins", "level", levels, methods.map(m => ({ label: m, values: levels.map(lv => at(lv, m, "mase")) })), "MASE", [{ label: "seasonal naive (1)", value: 1 }], v => nf2.format(v));
      }
      if (covCols.length && head.length) {
        const t2 = el("div", { class: "chart" });
        box.append(el("h3", {}, "Interval coverage against the share it should hold"),
          el("p", { class: "note" }, "The share of actual values inside each interval; a dot below its dashed line means the intervals were too narrow."), t2);
        dotChart(t2, "coverage (mean over levels)", "method", head.map(r => r.method),
          covCols.map(c => ({ label: c.slice(9) + "% interval", values: head.map(r => r[c] ?? null) })), "coverage",
          covCols.map(c => ({ label: `nominal ${c.slice(9)}%`, value: +c.slice(9) / 100 })), v => nf0.format(100 * v) + "%");
      }
    }
    if (acc.drivers) {
      const dr = records(acc.drivers);
      const method = rec && rec.method && dr.some(r => r.method === rec.method) ? rec.method : (dr[0] || {}).method;
      const groups = new Map();
      for (const r of dr.filter(r => r.method === method)) {
        const key = `${r.parent_level}\u0000${r.parent}\u0000${r.child_level}`;
        if (!groups.has(key)) groups.set(key, []);
        groups.get(key).push(r);
      }
      const label = g => (g[0].parent_level === "total" ? "the total" : `${g[0].parent} (${g[0].parent_level})`) + ` by ${g[0].child_level}`;
      const chartOf = (target, g) => { g.sort((a, b) => a.rank - b.rank); barChart(target, `Drivers of the error of ${label(g)}`, g.map(r => r.child), g.map(r => r.share), "share of absolute error", v => nf2.format(100 * v) + "%"); };
      box.append(el("h3", {}, `Drivers of the error (${method})`),
        el("p", { class: "note" }, "The children whose errors make up most of a parent's absolute error over the backtest (a parent is any node above them), largest first."));
      const all = [...groups.values()];
      const totals = all.filter(g => g[0].parent_level === "total");
      for (const g of totals) { const t = el("div", { class: "chart" }); box.append(t); chartOf(t, g); }
      const others = all.filter(g => g[0].parent_level !== "total");
      if (others.length) {
        const pick = el("select", { "aria-label": "drivers of another parent" }, el("option", { value: "" }, `Drivers of another parent (${others.length})…`),
          ...others.map((g, k) => el("option", { value: k }, label(g))));
        const t = el("div", { class: "chart" });
        pick.addEventListener("change", () => { if (pick.value !== "") chartOf(t, others[+pick.value]); });
        box.append(el("div", { class: "level-more" }, pick), t);
      }
    }
    for (const tb of meta.accuracy.filter(tb => tb.name !== "scores" && tb.name !== "drivers")) {
      box.append(el("h3", {}, tb.name), htmlTable(tb.columns, tb.rows.slice(0, 200).map(r => r.map(v => v == null ? "" : typeof v === "number" ? nf2.format(v) : v))));
    }
  }

  const resize = w => { for (const u of charts) if (u.root.isConnected && u.root.closest("#total-chart, #node-chart")) u.setSize({ width: w || width(u.root.parentElement), height: u.height }); };
  window.addEventListener("beforeprint", () => resize(680));
  window.addEventListener("afterprint", () => resize());

  document.getElementById("loading").remove();
  await new Promise(r => requestAnimationFrame(() => r()));
  api.timings.firstView = performance.now() - t0;
  api.timings.sinceNavigation = performance.now();
  api.ready = true;
})();
