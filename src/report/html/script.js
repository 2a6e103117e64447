// ulpgauge report: interactive plots, sortable index, colour scheme. Hand-written, no
// libraries; the page is complete without it.
(function () {
  "use strict";
  const NS = "http://www.w3.org/2000/svg";
  const root = document.documentElement;

  // Colour scheme: the system's unless switched here (remembered where storage is allowed).
  try {
    const saved = window.localStorage.getItem("ulpgauge-theme");
    if (saved === "light" || saved === "dark") root.setAttribute("data-theme", saved);
  } catch (e) { /* storage may be off for local files */ }
  const themeButton = document.getElementById("theme");
  if (themeButton) {
    themeButton.addEventListener("click", function () {
      const current = root.getAttribute("data-theme") ||
        (window.matchMedia && window.matchMedia("(prefers-color-scheme: dark)").matches ? "dark" : "light");
      const next = current === "dark" ? "light" : "dark";
      root.setAttribute("data-theme", next);
      try { window.localStorage.setItem("ulpgauge-theme", next); } catch (e) { /* ignored */ }
    });
  }
  window.addEventListener("beforeprint", function () {
    document.querySelectorAll("details").forEach(function (d) { d.open = true; });
  });

  // ---- values of a format's bit patterns ----
  function pow2(k) { return Math.pow(2, k); }
  function magnitude(fmt, bits) { return bits % pow2(fmt.exp + fmt.mant); }
  function negative(fmt, bits) { return bits >= pow2(fmt.exp + fmt.mant); }
  function isNan(fmt, bits) { return magnitude(fmt, bits) > fmt.top + 1; }
  function ordinal(fmt, bits) { const m = magnitude(fmt, bits); return negative(fmt, bits) ? -m : m; }
  function fromOrdinal(fmt, o) { return o < 0 ? pow2(fmt.exp + fmt.mant) - o : o; }
  function decode(fmt, bits) {
    const m = magnitude(fmt, bits);
    const mant = m % pow2(fmt.mant);
    const field = Math.floor(m / pow2(fmt.mant));
    const bias = pow2(fmt.exp - 1) - 1;
    let v;
    // E4M3 (finiteOnly): the top field holds numbers but for S.1111.111, its NaN.
    if (field === pow2(fmt.exp) - 1 && (!fmt.finiteOnly || mant === pow2(fmt.mant) - 1)) {
      v = mant || fmt.finiteOnly ? NaN : Infinity;
    }
    else if (field === 0) v = mant * pow2(1 - bias - fmt.mant);
    else v = (1 + mant / pow2(fmt.mant)) * pow2(field - bias);
    return negative(fmt, bits) ? -v : v;
  }
  // The shortest decimal that reads back as this pattern in this format.
  function value(fmt, bits) {
    const v = decode(fmt, bits);
    if (v !== v) return "NaN";
    if (v === Infinity) return "+inf";
    if (v === -Infinity) return "-inf";
    if (v === 0) return negative(fmt, bits) ? "-0" : "+0";
    // Whole numbers are written out ("65504", not "65500"), as the sentences do.
    if (Number.isInteger(v) && Math.abs(v) < 1e16) return String(v);
    const o = ordinal(fmt, bits);
    let up = decode(fmt, fromOrdinal(fmt, o + 1));
    let down = decode(fmt, fromOrdinal(fmt, o - 1));
    // Past the largest finite value, values round to infinity from half an ulp on.
    if (!isFinite(up)) up = v + (v - down);
    if (!isFinite(down)) down = v - (up - v);
    const hi = (v + up) / 2, lo = (v + down) / 2;
    for (let d = 1; d <= 17; d++) {
      const back = Number(v.toPrecision(d));
      if (back < hi && back > lo) return String(back);
    }
    return String(v);
  }
  function hex(fmt, bits) {
    let h = bits.toString(16);
    const width = (fmt.exp + fmt.mant + 1) / 4;
    while (h.length < width) h = "0" + h;
    return "0x" + h;
  }
  function shown(fmt, bits) {
    if (bits === null || bits === undefined) return "none (crashed or hung)";
    return value(fmt, bits) + " (" + hex(fmt, bits) + ")";
  }
  function ulpText(e) {
    return e >= 1e6 ? e.toExponential(4) : e.toFixed(4);
  }
  function el(name, attrs, parent) {
    const n = document.createElementNS(NS, name);
    for (const k in attrs) n.setAttribute(k, attrs[k]);
    if (parent) parent.appendChild(n);
    return n;
  }
  function html(tag, cls, text) {
    const n = document.createElement(tag);
    if (cls) n.className = cls;
    if (text !== undefined) n.textContent = text;
    return n;
  }
  const scale = function (e) { return Math.log2(1 + e); };
  let uid = 0;

  // ---- the main plot: largest error per bucket over an ordinal axis ----
  function Plot(figure, data) {
    this.figure = figure;
    this.data = data;
    this.fmt = { exp: data.exp, mant: data.mant, top: data.top, finiteOnly: !!data.finite_only };
    // Outputs and references are in the output format (mixed-format kernels), inputs in fmt.
    const o = data.out || data;
    this.out = { exp: o.exp, mant: o.mant, top: o.top, finiteOnly: !!o.finite_only };
    this.area = figure.querySelector(".plot-area");
    this.pick = figure.querySelector(".pick");
    this.tip = html("div", "tooltip");
    this.tip.hidden = true;
    figure.appendChild(this.tip);
    this.id = "p" + (uid++);
    const top = data.top;
    let lo = Infinity, hi = -Infinity;
    const see = function (o) { o = Math.max(-top, Math.min(top, o)); lo = Math.min(lo, o); hi = Math.max(hi, o); };
    data.buckets.forEach(function (b) { see(b[0]); see(b[1]); });
    data.runs.forEach(function (r) { see(r[0]); see(r[1]); });
    data.marks.forEach(function (m) { see(m[0]); });
    if (!isFinite(lo)) { lo = -top; hi = top; }
    if (hi <= lo) hi = lo + 1;
    this.full = [lo, hi];
    this.view = [lo, hi];
    this.maxAll = data.buckets.reduce(function (m, b) { return Math.max(m, b[3]); }, 0);
    const self = this;
    const reset = figure.querySelector(".reset");
    if (reset) reset.addEventListener("click", function () { self.view = self.full.slice(); self.draw(); });
    window.addEventListener("resize", function () { self.draw(); });
    this.draw();
  }

  Plot.prototype.geometry = function () {
    const width = Math.max(480, Math.min(1060, this.area.clientWidth || 960));
    return { W: width, H: 300, L: 64, R: 14, T: 14, B: 44 };
  };

  Plot.prototype.x = function (o) {
    const g = this.g, v = this.view;
    return g.L + (o - v[0]) / (v[1] - v[0] + 1) * (g.W - g.L - g.R);
  };

  Plot.prototype.ordinalAt = function (px) {
    const g = this.g, v = this.view;
    return v[0] + (px - g.L) / (g.W - g.L - g.R) * (v[1] - v[0] + 1);
  };

  Plot.prototype.draw = function () {
    const self = this, data = this.data, fmt = this.fmt;
    const g = this.g = this.geometry();
    const v = this.view;
    this.area.textContent = "";
    const svg = el("svg", { viewBox: "0 0 " + g.W + " " + g.H, width: g.W, height: g.H }, this.area);
    this.svg = svg;
    const defs = el("defs", {}, svg);
    const pattern = el("pattern", { id: this.id + "-hatch", width: 8, height: 8, patternUnits: "userSpaceOnUse", patternTransform: "rotate(45)" }, defs);
    el("line", { x1: 0, y1: 0, x2: 0, y2: 8, class: "hatch-line" }, el("g", { class: "hatch" }, pattern));
    const plotH = g.H - g.T - g.B;
    el("rect", { x: g.L, y: g.T, width: g.W - g.L - g.R, height: plotH, class: "plot-bg" }, svg);
    const visible = data.buckets.filter(function (b) { return b[1] >= v[0] && b[0] <= v[1]; });
    const maxView = visible.reduce(function (m, b) { return Math.max(m, b[3]); }, 0);
    const tMax = scale(Math.max(1, maxView)) * 1.05;
    const y = function (e) { return g.T + plotH - scale(e) / tMax * plotH; };
    this.y = y;
    // Non-finite runs.
    data.runs.forEach(function (r) {
      if (r[1] < v[0] || r[0] > v[1]) return;
      const xa = self.x(Math.max(r[0], v[0])), xb = self.x(Math.min(r[1], v[1]) + 1);
      const band = el("rect", { x: xa, y: g.T, width: Math.max(2, xb - xa), height: plotH, fill: "url(#" + self.id + "-hatch)", class: "run-band" }, svg);
      el("title", {}, band).textContent = "non-finite: kernel " + r[2] + " where the reference is " + r[3] + ", " + r[4] + " inputs in binade " + r[5];
    });
    // Bars.
    const worstOrd = data.worst === null || data.worst === undefined ? null : ordinal(fmt, data.worst);
    this.bars = [];
    visible.forEach(function (b) {
      const xa = self.x(Math.max(b[0], v[0])), xb = self.x(Math.min(b[1], v[1]) + 1);
      const yy = y(b[3]);
      const isWorst = b[3] === self.maxAll && worstOrd !== null && worstOrd >= b[0] && worstOrd <= b[1];
      const rect = el("rect", { x: xa, y: yy, width: Math.max(1, xb - xa), height: Math.max(0.5, g.T + plotH - yy), class: isWorst ? "bar worst" : "bar" }, svg);
      if (isWorst) rect.setAttribute("data-worst", "true");
      self.bars.push({ b: b, rect: rect, xa: xa, xb: Math.max(xa + 1, xb) });
    });
    // Thresholds.
    data.marks.forEach(function (m, i) {
      if (m[0] < v[0] || m[0] > v[1]) return;
      const xm = self.x(m[0]) + 0.5;
      const line = el("line", { x1: xm, y1: g.T, x2: xm, y2: g.T + plotH, class: "mark-" + m[1] }, svg);
      el("title", {}, line).textContent = m[2] + " threshold at x = " + shown(fmt, fromOrdinal(fmt, m[0]));
      const right = xm > g.L + 0.75 * (g.W - g.L - g.R);
      el("text", { x: right ? xm - 3 : xm + 3, y: g.T + 12 + (m[1] === "kernel" ? 13 : 0) + (i % 2) * 0, "text-anchor": right ? "end" : "start", class: "mark-" + m[1] + "-label" }, svg).textContent = m[2];
    });
    // Axes.
    [0, 0.5, 1, 2, 4, 16, 64, 256, 1024, 65536, 16777216].forEach(function (e) {
      if (scale(e) > tMax) return;
      const yy = y(e);
      el("line", { x1: g.L - 4, y1: yy, x2: g.L, y2: yy, class: "axis" }, svg);
      el("text", { x: g.L - 6, y: yy + 3, "text-anchor": "end" }, svg).textContent = String(e);
    });
    el("text", { x: 14, y: g.T + plotH / 2, transform: "rotate(-90 14 " + (g.T + plotH / 2) + ")", "text-anchor": "middle" }, svg).textContent = "max ulp error";
    const ticks = [[0, "0"]];
    const bias = pow2(fmt.exp - 1) - 1;
    for (let k = 1 - bias; k <= bias + (fmt.finiteOnly ? 1 : 0); k++) {
      const o = (k + bias) * pow2(fmt.mant);
      ticks.push([o, "2^" + k], [-o, "-2^" + k]);
    }
    ticks.sort(function (a, b) { return (a[0] !== 0) - (b[0] !== 0) || a[0] - b[0]; });
    const kept = [];
    ticks.forEach(function (t) {
      if (t[0] < v[0] || t[0] > v[1]) return;
      const xt = self.x(t[0]);
      if (kept.every(function (k) { return Math.abs(k[0] - xt) >= 55; })) kept.push([xt, t[1]]);
    });
    if (kept.length < 2) {
      [v[0], v[1]].forEach(function (o) {
        const bits = fromOrdinal(fmt, Math.round(o));
        kept.push([self.x(o), value(fmt, bits)]);
      });
    }
    const base = g.T + plotH;
    kept.forEach(function (k) {
      el("line", { x1: k[0], y1: base, x2: k[0], y2: base + 4, class: "axis" }, svg);
      el("text", { x: k[0], y: base + 16, "text-anchor": "middle" }, svg).textContent = k[1];
    });
    el("text", { x: g.L + (g.W - g.L - g.R) / 2, y: g.H - 6, "text-anchor": "middle" }, svg).textContent =
      "x from " + value(fmt, fromOrdinal(fmt, Math.round(v[0]))) + " to " + value(fmt, fromOrdinal(fmt, Math.round(v[1]))) + " (ordinal axis)";
    this.hover = el("rect", { x: 0, y: g.T, width: 0, height: plotH, class: "hover-box", visibility: "hidden" }, svg);
    this.select = el("rect", { x: 0, y: g.T, width: 0, height: plotH, class: "select-box", visibility: "hidden" }, svg);
    this.listen();
  };

  // The bucket under a pixel (or the nearest within 4 px).
  Plot.prototype.barAt = function (px) {
    let best = null, dist = 5;
    this.bars.forEach(function (bar) {
      const d = px < bar.xa ? bar.xa - px : px > bar.xb ? px - bar.xb : 0;
      if (d < dist || (d === 0 && best && bar.b[3] > best.b[3] && dist === 0)) { best = bar; dist = d; }
    });
    return best;
  };

  Plot.prototype.describe = function (bar) {
    const fmt = this.fmt, b = bar.b;
    const lo = value(fmt, fromOrdinal(fmt, b[0])), hi = value(fmt, fromOrdinal(fmt, b[1]));
    const lines = ["x from " + lo + " to " + hi + ": " + b[2] + " point" + (b[2] === 1 ? "" : "s") + ", largest error " + ulpText(b[3]) + " ulp"];
    const w = b[4];
    if (w) {
      lines.push("worst input x = " + shown(fmt, w[0]));
      lines.push("kernel output f(x) = " + shown(this.out, w[1]));
      lines.push("correctly rounded reference = " + shown(this.out, w[2]));
      lines.push("error = " + ulpText(b[3]) + " ulp");
    }
    return lines;
  };

  Plot.prototype.show = function (target, bar) {
    target.textContent = "";
    this.describe(bar).forEach(function (line, i) {
      const div = html("div", i === 1 ? "pick-input" : "", line);
      target.appendChild(div);
    });
    const w = bar.b[4];
    if (w) target.setAttribute("data-input-bits", hex(this.fmt, w[0]));
  };

  Plot.prototype.local = function (ev) {
    const r = this.svg.getBoundingClientRect();
    return (ev.clientX - r.left) * (this.g.W / r.width);
  };

  Plot.prototype.listen = function () {
    const self = this, svg = this.svg, g = this.g;
    let start = null;
    svg.addEventListener("mousedown", function (ev) { start = self.local(ev); ev.preventDefault(); });
    svg.addEventListener("mousemove", function (ev) {
      const px = self.local(ev);
      if (start !== null && Math.abs(px - start) > 4) {
        const a = Math.min(px, start), b = Math.max(px, start);
        self.select.setAttribute("x", a);
        self.select.setAttribute("width", b - a);
        self.select.setAttribute("visibility", "visible");
      }
      const bar = self.barAt(px);
      if (!bar) { self.hover.setAttribute("visibility", "hidden"); self.tip.hidden = true; return; }
      self.hover.setAttribute("x", bar.xa - 1);
      self.hover.setAttribute("width", bar.xb - bar.xa + 2);
      self.hover.setAttribute("visibility", "visible");
      self.show(self.tip, bar);
      self.tip.hidden = false;
      const fr = self.figure.getBoundingClientRect();
      const left = ev.clientX - fr.left + 14;
      self.tip.style.left = Math.min(left, fr.width - 300) + "px";
      self.tip.style.top = (ev.clientY - fr.top + 14) + "px";
    });
    svg.addEventListener("mouseleave", function () {
      self.hover.setAttribute("visibility", "hidden");
      self.tip.hidden = true;
    });
    svg.addEventListener("mouseup", function (ev) {
      const px = self.local(ev);
      const from = start;
      start = null;
      self.select.setAttribute("visibility", "hidden");
      if (from !== null && Math.abs(px - from) > 4) {
        const a = Math.max(self.view[0], Math.floor(self.ordinalAt(Math.min(px, from))));
        const b = Math.min(self.view[1], Math.ceil(self.ordinalAt(Math.max(px, from))));
        if (b > a) { self.view = [a, b]; self.draw(); }
        return;
      }
      const bar = self.barAt(px);
      if (bar) self.show(self.pick, bar);
    });
    void g;
  };

  // ---- small plots: kernel output against the reference near thresholds and kinks ----
  function nearPlot(container, fmt, out, n) {
    const W = 320, H = 170, L = 50, R = 8, T = 14, B = 30;
    const box = html("figure", "near");
    box.appendChild(html("figcaption", "", n.what + " at x = " + value(fmt, n.centre)));
    const svg = el("svg", { viewBox: "0 0 " + W + " " + H, width: W, height: H }, null);
    box.appendChild(svg);
    container.appendChild(box);
    const pts = n.points;
    if (!pts.length) return;
    const c = ordinal(fmt, n.centre);
    const refAtCentre = pts.reduce(function (acc, p) { return ordinal(fmt, p[0]) === c && !isNan(out, p[2]) ? ordinal(out, p[2]) : acc; }, null);
    const base = refAtCentre === null ? 0 : refAtCentre;
    // Output steps from the reference at the centre, on a symmetric log scale: one step and a
    // million steps apart both stay readable.
    const sl = function (d) { return Math.sign(d) * Math.log2(1 + Math.abs(d)); };
    const ys = [];
    pts.forEach(function (p) {
      [p[1], p[2]].forEach(function (b) { if (b !== null && !isNan(out, b)) ys.push(ordinal(out, b) - base); });
    });
    const dlo = Math.min.apply(null, ys.concat([0])), dhi = Math.max.apply(null, ys.concat([0]));
    let ylo = sl(dlo), yhi = sl(dhi);
    if (yhi - ylo < 2) { ylo -= 1; yhi += 1; }
    const xs = pts.map(function (p) { return ordinal(fmt, p[0]) - c; });
    const xlo = Math.min.apply(null, xs), xhi = Math.max.apply(null, xs.concat([xlo + 1]));
    const X = function (d) { return L + (d - xlo) / (xhi - xlo) * (W - L - R); };
    const Y = function (d) { return T + (yhi - sl(d)) / (yhi - ylo) * (H - T - B); };
    el("rect", { x: L, y: T, width: W - L - R, height: H - T - B, class: "plot-bg" }, svg);
    el("text", { x: L + (W - L - R) / 2, y: H - 6, "text-anchor": "middle" }, svg).textContent = "steps of x from " + value(fmt, n.centre);
    [dlo, 0, dhi].forEach(function (d, i) {
      if (i !== 1 && d === 0) return;
      el("text", { x: L - 4, y: Y(d) + 4, "text-anchor": "end" }, svg).textContent = (d > 0 ? "+" : "") + d;
    });
    el("text", { x: 10, y: T + (H - T - B) / 2, transform: "rotate(-90 10 " + (T + (H - T - B) / 2) + ")", "text-anchor": "middle" }, svg).textContent = "output steps";
    pts.forEach(function (p, i) {
      const xx = X(xs[i]);
      const tip = "x = " + shown(fmt, p[0]) + "\nkernel f(x) = " + shown(out, p[1]) + "\nreference = " + shown(out, p[2]) +
        (p[3] !== null ? "\nleft-hand reference = " + shown(out, p[3]) : "") + (p[4] !== null ? "\nerror " + ulpText(p[4]) + " ulp" : "");
      if (p[2] !== null && !isNan(out, p[2])) {
        const r = el("rect", { x: xx - 3.5, y: Y(ordinal(out, p[2]) - base) - 3.5, width: 7, height: 7, class: "r" }, svg);
        el("title", {}, r).textContent = tip;
      }
      if (p[1] === null || isNan(out, p[1])) {
        // A non-finite (or missing) output: a triangle along the top edge.
        const t = el("path", { d: "M" + (xx - 4) + " " + (T + 2) + "h8l-4 7z", class: "nf" }, svg);
        el("title", {}, t).textContent = tip;
      } else {
        const k = el("circle", { cx: xx, cy: Y(ordinal(out, p[1]) - base), r: 5, class: "k" }, svg);
        el("title", {}, k).textContent = tip;
      }
    });
  }

  // ---- sortable tables ----
  function sortable(table) {
    const heads = table.querySelectorAll("thead th");
    heads.forEach(function (th, col) {
      th.addEventListener("click", function () {
        const up = th.getAttribute("aria-sort") !== "ascending";
        heads.forEach(function (h) { h.removeAttribute("aria-sort"); });
        th.setAttribute("aria-sort", up ? "ascending" : "descending");
        const numeric = th.getAttribute("data-type") === "num";
        const body = table.tBodies[0];
        const rows = Array.prototype.slice.call(body.rows);
        const key = function (row) {
          const cell = row.cells[col];
          const raw = cell.getAttribute("data-sort") || cell.textContent;
          return numeric ? Number(raw) : raw.toLowerCase();
        };
        rows.sort(function (a, b) {
          const ka = key(a), kb = key(b);
          const c = ka < kb ? -1 : ka > kb ? 1 : 0;
          return up ? c : -c;
        });
        rows.forEach(function (r) { body.appendChild(r); });
      });
    });
  }

  document.querySelectorAll("table.sortable").forEach(sortable);
  document.querySelectorAll("figure.plot").forEach(function (figure) {
    const script = figure.querySelector("script.plot-data");
    if (!script) return;
    const data = JSON.parse(script.textContent);
    const plot = new Plot(figure, data);
    const section = figure.closest("section");
    const grid = section ? section.querySelector(".near-grid") : null;
    if (grid) data.near.forEach(function (n) { nearPlot(grid, plot.fmt, plot.out, n); });
    const more = section ? section.querySelector(".all-binades") : null;
    if (more) {
      more.addEventListener("click", function () {
        const body = section.querySelector("table.binades tbody");
        body.textContent = "";
        data.binades.forEach(function (b) {
          const tr = document.createElement("tr");
          const cells = [
            [b[0], null], [String(b[1]), b[1]], [ulpText(b[2]), b[2]], [b[3].toFixed(4), b[3]],
            [(100 * b[4]).toFixed(2) + "%", b[4]], [b[5] === null ? "-" : shown(plot.fmt, b[5]), null]
          ];
          cells.forEach(function (c, i) {
            const td = html("td", i >= 1 && i <= 4 ? "num" : "", c[0]);
            if (c[1] !== null) td.setAttribute("data-sort", String(c[1]));
            tr.appendChild(td);
          });
          body.appendChild(tr);
        });
        more.parentNode.hidden = true;
      });
    }
  });
  root.setAttribute("data-ready", "true");
})();
