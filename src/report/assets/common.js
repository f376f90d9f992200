/* common.js: shared by wakeline's report pages (report.html, run.html).
 * Written into each page inline, so a page is one self-contained file that
 * makes no network request.  Holds:
 *   wl.fmt   the rounding rule for numbers shown to people, transliterated
 *            from src/core/numfmt.c (same strings; both are tested against
 *            tests/data/numfmt-examples.csv)
 *   wl.tq975 Student's t 0.975 quantile (Abramowitz & Stegun 26.7.3-4)
 *   wl.stats n, mean, standard deviation, 95% interval of the mean
 *   ticks    linear (1-2-5, Heckbert 1990) and symmetric-log (round decades),
 *            the same rules as src/report/scale.c
 *   wl.Plot  a small SVG plot: axes, ticks, bands, lines, points, error bars
 */
'use strict';
var wl = (function () {
  var NDIG = 15, PM = ' \u00b1 ';
  var ZEROS = '000000000000000000000000000000';

  /* ---- numbers for people (numfmt.c) ---- */
  function digitsOf(v) { /* 15 significant digits of |v| and the exponent */
    var s = Math.abs(v).toExponential(NDIG - 1).split('e');
    return { d: s[0].replace('.', ''), e: parseInt(s[1], 10) };
  }
  function roundDigits(v, dec) { /* rounded |v| = k x 10^-dec, half away from zero */
    if (v === 0) return '0';
    var de = digitsOf(v), d = de.d, keep = de.e + dec + 1, k, i, a;
    if (keep < 0) return '0';
    if (keep > NDIG) return d + ZEROS.slice(0, keep - NDIG);
    k = '0' + d.slice(0, keep);
    if (keep < NDIG && d.charAt(keep) >= '5') {
      a = k.split('');
      for (i = a.length - 1; i >= 0; i--) {
        if (a[i] === '9') { a[i] = '0'; continue; }
        a[i] = String.fromCharCode(a[i].charCodeAt(0) + 1);
        break;
      }
      k = a.join('');
    }
    return k.replace(/^0+(?=\d)/, '');
  }
  function placePoint(neg, k, dec) { /* [-]k x 10^-dec, plain */
    var zero = k === '0', s = neg && !zero ? '-' : '';
    if (dec <= 0) return s + k + (zero ? '' : ZEROS.slice(0, -dec));
    if (k.length < dec + 1) return s + '0.' + ZEROS.slice(0, dec - k.length) + k;
    return s + k.slice(0, k.length - dec) + '.' + k.slice(k.length - dec);
  }
  function clampDec(d) { return d > 30 ? 30 : d < -30 ? -30 : d; }
  function fixed(v, dec) {
    if (!isFinite(v)) return 'n/a';
    dec = clampDec(dec);
    return placePoint(v < 0, roundDigits(v, dec), dec);
  }
  function place(u) { /* {dec, ur}: PDG rule, 100-354 two digits, else one */
    if (!isFinite(u) || !(u > 0)) return { dec: 0, ur: NaN };
    var de = digitsOf(u), lead = parseInt(de.d.slice(0, 3), 10);
    var dec = lead <= 354 ? 1 - de.e : -de.e;
    return { dec: dec, ur: parseInt(roundDigits(u, clampDec(dec)), 10) * Math.pow(10, -clampDec(dec)) };
  }
  function exp10(v) { return digitsOf(v).e; }
  function pmExp(v, u, dec) {
    var ur = place(u).ur, x = exp10(v !== 0 && Math.abs(v) >= ur ? v : ur);
    if (dec + x > NDIG) dec = NDIG - x;
    return '(' + placePoint(v < 0, roundDigits(v, dec), dec + x) + PM +
      placePoint(false, roundDigits(u, dec), dec + x) + ')e' + x;
  }
  function sig(v, n) {
    if (!isFinite(v)) return 'n/a';
    n = Math.max(1, Math.min(NDIG, n | 0));
    if (v === 0) return '0';
    var e = exp10(v), k = roundDigits(v, n - 1 - e);
    if (k.length > n) { e++; k = roundDigits(v, n - 1 - e); }
    if (Math.abs(v) >= 1e-4 && Math.abs(v) < 1e6) return fixed(v, Math.max(0, n - 1 - e));
    return placePoint(v < 0, k, n - 1) + 'e' + e;
  }
  function pm(v, u) {
    if (!isFinite(v)) return 'n/a';
    if (!isFinite(u) || !(u > 0)) return sig(v, 3);
    var p = place(u);
    var big = Math.max(Math.abs(v), p.ur);
    if ((p.dec > 6 && big < 1e-3) || big >= 1e6) return pmExp(v, u, p.dec);
    return fixed(v, p.dec) + PM + fixed(u, p.dec);
  }
  function value(v, u) {
    if (!isFinite(v) || !isFinite(u) || !(u > 0)) return sig(v, 3);
    var s = pm(v, u), i = s.indexOf(PM);
    if (s.charAt(0) !== '(') return s.slice(0, i);
    return s.slice(1, i) + s.slice(s.indexOf(')') + 1);
  }

  /* ---- Student's t: P(|T| <= t) by Abramowitz & Stegun 26.7.3 (odd df)
   * and 26.7.4 (even df), inverted by bisection ---- */
  function tAbsCdf(t, df) {
    var th = Math.atan(t / Math.sqrt(df)), c = Math.cos(th), s = Math.sin(th), sum, term, k;
    if (df % 2 === 1) {
      if (df === 1) return 2 * th / Math.PI;
      sum = term = c;
      for (k = 3; k <= df - 2; k += 2) { term *= c * c * (k - 1) / k; sum += term; }
      return 2 / Math.PI * (th + s * sum);
    }
    sum = term = 1;
    for (k = 2; k <= df - 2; k += 2) { term *= c * c * (k - 1) / k; sum += term; }
    return s * sum;
  }
  var tcache = {};
  function tq975(df) {
    df = Math.round(df);
    if (!(df >= 1)) return NaN;
    if (tcache[df]) return tcache[df];
    var lo = 0, hi = 1000, i, mid;
    for (i = 0; i < 200 && hi - lo > 1e-13; i++) {
      mid = 0.5 * (lo + hi);
      if (tAbsCdf(mid, df) < 0.95) lo = mid; else hi = mid;
    }
    return (tcache[df] = 0.5 * (lo + hi));
  }
  /* n, mean, sample sd, half width of the 95% interval of the mean */
  function stats(vals) {
    var n = 0, s = 0, ss = 0, i, m, sd;
    for (i = 0; i < vals.length; i++) if (isFinite(vals[i])) { n++; s += vals[i]; }
    if (!n) return { n: 0, mean: NaN, sd: NaN, half: NaN };
    m = s / n;
    for (i = 0; i < vals.length; i++) if (isFinite(vals[i])) ss += (vals[i] - m) * (vals[i] - m);
    sd = n > 1 ? Math.sqrt(ss / (n - 1)) : NaN;
    return { n: n, mean: m, sd: sd, half: n > 1 ? tq975(n - 1) * sd / Math.sqrt(n) : NaN };
  }

  /* ---- ticks (scale.c) ---- */
  function niceStep(raw) {
    var p = Math.pow(10, Math.floor(Math.log10(raw))), f = raw / p;
    return (f <= 1 ? 1 : f <= 2 ? 2 : f <= 5 ? 5 : 10) * p;
  }
  function ticksLinear(lo, hi, max) {
    var out = [], step, k0, k1, k, e, f, v;
    if (!isFinite(lo) || !isFinite(hi)) return out;
    if (lo > hi) { v = lo; lo = hi; hi = v; }
    max = Math.max(2, max);
    if (hi - lo <= 0) return [lo];
    step = niceStep((hi - lo) / (2 * max));
    for (;;) {
      k0 = Math.ceil(lo / step - 1e-9); k1 = Math.floor(hi / step + 1e-9);
      if (k1 - k0 + 1 <= max) break;
      step = niceStep(step * 1.01);
    }
    while (k1 - k0 + 1 < 2) {
      e = Math.pow(10, Math.floor(Math.log10(step) + 1e-12)); f = step / e;
      step = f > 4.5 ? 2 * e : f > 1.5 ? e : 0.5 * e;
      k0 = Math.ceil(lo / step - 1e-9); k1 = Math.floor(hi / step + 1e-9);
    }
    for (k = k0; k <= k1; k++) { v = k * step; out.push(Math.abs(v) < step * 1e-9 ? 0 : v); }
    return out;
  }
  var SYMA = 1 / (1 - 0.1);
  function symlog(v, c) {
    var a = Math.abs(v);
    return a <= c ? v * SYMA : (v < 0 ? -1 : 1) * c * (SYMA + Math.log10(a / c));
  }
  function ticksSymlog(lo, hi, c, max) {
    var amax = Math.max(Math.abs(lo), Math.abs(hi)), kmin, kmax, every = 1, k, v, cnt, out = [];
    if (amax <= c * 1.0000001) return ticksLinear(lo, hi, max);
    kmin = Math.ceil(Math.log10(c / 3) - 1e-9); kmax = Math.floor(Math.log10(amax) + 1e-9);
    for (;;) {
      cnt = lo <= 0 && hi >= 0 ? 1 : 0;
      for (k = kmin; k <= kmax; k++) if (k % every === 0) {
        v = Math.pow(10, k); cnt += (v >= lo && v <= hi) + (-v >= lo && -v <= hi);
      }
      if (cnt <= max || every > kmax - kmin) break;
      every++;
    }
    for (k = kmax; k >= kmin; k--) if (k % every === 0 && -Math.pow(10, k) >= lo && -Math.pow(10, k) <= hi) out.push(-Math.pow(10, k));
    if (lo <= 0 && hi >= 0) out.push(0);
    for (k = kmin; k <= kmax; k++) if (k % every === 0 && Math.pow(10, k) >= lo && Math.pow(10, k) <= hi) out.push(Math.pow(10, k));
    return out;
  }
  function tickLabel(v) { /* fewest decimals that give back v */
    if (v === 0) return '0';
    for (var d = 0; d <= 10; d++) {
      var s = v.toFixed(d);
      if (Math.abs(parseFloat(s) - v) <= 1e-9 * Math.abs(v)) return s.replace(/^-(0\.?0*)$/, '$1');
    }
    return sig(v, 4);
  }

  /* ---- colours and marks: Okabe & Ito (2008), colour-blind safe ---- */
  var PALETTE = ['#0072B2', '#E69F00', '#009E73', '#CC79A7', '#56B4E9', '#D55E00', '#F0E442', '#000000'];
  var SHAPES = ['circle', 'square', 'triangle', 'diamond', 'down', 'cross'];

  function esc(s) {
    return String(s).replace(/[&<>"']/g, function (c) {
      return { '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' }[c];
    });
  }
  var NS = 'http://www.w3.org/2000/svg';
  /* SVG is built as a light tree of {n, a, k, textContent} and written out
   * as one string: a page of 2000 runs draws two plots of 2000 markers
   * each, and one innerHTML costs far less than 20000 createElementNS. */
  function el(name, attrs, parent) {
    var e = { n: name, a: attrs || {}, k: [], textContent: null };
    if (parent) parent.k.push(e);
    return e;
  }
  function markup(e) {
    var s = '<' + e.n, k;
    for (k in e.a) if (e.a[k] !== undefined && e.a[k] !== null) s += ' ' + k + '="' + esc(e.a[k]) + '"';
    s += '>';
    if (e.textContent !== null) s += esc(e.textContent);
    for (k = 0; k < e.k.length; k++) s += markup(e.k[k]);
    return s + '</' + e.n + '>';
  }
  function f1(v) { return Math.round(v * 10) / 10; }
  /* the outline of a marker as an SVG subpath (many markers in one path) */
  function markPath(shape, x, y, r) {
    x = f1(x); y = f1(y);
    var a = f1(r), b = f1(2 * r), t = f1(1.1 * r), u = f1(0.75 * r), d = f1(1.2 * r);
    if (shape === 'square') { a = f1(0.85 * r); return 'M' + f1(x - a) + ' ' + f1(y - a) + 'h' + 2 * a + 'v' + 2 * a + 'h' + -2 * a + 'z'; }
    if (shape === 'triangle') return 'M' + x + ' ' + f1(y - t) + 'L' + f1(x + a) + ' ' + f1(y + u) + 'L' + f1(x - a) + ' ' + f1(y + u) + 'z';
    if (shape === 'down') return 'M' + x + ' ' + f1(y + t) + 'L' + f1(x + a) + ' ' + f1(y - u) + 'L' + f1(x - a) + ' ' + f1(y - u) + 'z';
    if (shape === 'diamond') return 'M' + x + ' ' + f1(y - d) + 'L' + f1(x + a) + ' ' + y + 'L' + x + ' ' + f1(y + d) + 'L' + f1(x - a) + ' ' + y + 'z';
    if (shape === 'cross') return 'M' + f1(x - a) + ' ' + y + 'H' + f1(x + a) + 'M' + x + ' ' + f1(y - a) + 'V' + f1(y + a);
    return 'M' + f1(x - a) + ' ' + y + 'a' + a + ' ' + a + ' 0 1 0 ' + b + ' 0a' + a + ' ' + a + ' 0 1 0 ' + -b + ' 0z';
  }
  /* a marker of a given shape centred on (x, y) */
  function mark(parent, shape, x, y, r, color, filled, title) { /* color null: inherit the group's */
    var e, p, a = color ? { stroke: color, fill: filled ? color : '#fff', 'stroke-width': filled ? 0.8 : 1.4 } : {};
    x = f1(x); y = f1(y);
    if (shape === 'square') { a.x = f1(x - r * 0.85); a.y = f1(y - r * 0.85); a.width = a.height = f1(1.7 * r); e = el('rect', a, parent); }
    else if (shape === 'triangle' || shape === 'down') {
      var s = shape === 'down' ? -1 : 1;
      p = [x, y - s * r * 1.1, x + r, y + s * r * 0.75, x - r, y + s * r * 0.75];
      a.points = p.map(f1).join(' '); e = el('polygon', a, parent);
    } else if (shape === 'diamond') {
      p = [x, y - r * 1.2, x + r, y, x, y + r * 1.2, x - r, y];
      a.points = p.map(f1).join(' '); e = el('polygon', a, parent);
    } else if (shape === 'cross') {
      a.d = 'M' + (x - r) + ' ' + y + 'H' + (x + r) + 'M' + x + ' ' + (y - r) + 'V' + (y + r);
      a['stroke-width'] = 1.6; a.fill = 'none'; e = el('path', a, parent);
    } else { a.cx = x; a.cy = y; a.r = r; e = el('circle', a, parent); }
    if (title) el('title', {}, e).textContent = title;
    return e;
  }
  /* a small inline SVG swatch for legends written as HTML */
  function swatch(kind, color, shape, filled) {
    var s = '<svg class="sw" width="22" height="14" viewBox="0 0 22 14" aria-hidden="true">';
    if (kind === 'band') s += '<rect x="1" y="2" width="20" height="10" fill="' + color + '" fill-opacity="0.25" stroke="none"/>';
    else if (kind === 'line') s += '<path d="M1 7H21" stroke="' + color + '" stroke-width="2" fill="none"/>';
    else if (kind === 'dash') s += '<path d="M1 7H21" stroke="' + color + '" stroke-width="1.5" stroke-dasharray="4 3" fill="none"/>';
    else s += markup(mark(null, shape, 11, 7, 4.5, color, filled));
    return s + '</svg>';
  }

  /* ---- Plot: one SVG panel ----------------------------------------------
   * new Plot({w, h, xlabel, ylabel, ylog: c (symmetric-log threshold) or 0,
   *           xcats: names of a categorical x axis or null, equal: one data
   *           unit the same length on both axes, xlim, ylim})
   * then add items and call svg() for the element. */
  function Plot(o) {
    this.o = o; this.items = [];
    this.xr = [Infinity, -Infinity]; this.yr = [Infinity, -Infinity];
  }
  Plot.prototype.grow = function (x, y) {
    if (isFinite(x)) { this.xr[0] = Math.min(this.xr[0], x); this.xr[1] = Math.max(this.xr[1], x); }
    if (isFinite(y)) { this.yr[0] = Math.min(this.yr[0], y); this.yr[1] = Math.max(this.yr[1], y); }
  };
  /* band: {vertical, a, b, color, opacity, label}: x in [a, b] (vertical) or y */
  Plot.prototype.band = function (b) { this.items.push({ t: 'band', b: b }); return this; };
  /* line: {x[], y[], color, width, dash}; NaN breaks the line */
  Plot.prototype.line = function (l) {
    for (var i = 0; i < l.x.length; i++) this.grow(l.x[i], l.y[i]);
    this.items.push({ t: 'line', l: l }); return this;
  };
  /* points: {x[], y[], color, shape, r, filled, titles[], hrefs[], lo[], hi[] (error bars)} */
  Plot.prototype.points = function (p) {
    for (var i = 0; i < p.x.length; i++) {
      this.grow(p.x[i], p.y[i]);
      if (p.lo) { this.grow(p.x[i], p.lo[i]); this.grow(p.x[i], p.hi[i]); }
    }
    this.items.push({ t: 'points', p: p }); return this;
  };
  /* text: {x, y, text, anchor, color} in data coordinates */
  Plot.prototype.text = function (t) { this.items.push({ t: 'text', x: t }); return this; };
  /* vline / hline: {at, color, dash, label} */
  Plot.prototype.vline = function (v) { this.grow(v.at, NaN); this.items.push({ t: 'vline', v: v }); return this; };
  Plot.prototype.hline = function (v) { this.items.push({ t: 'hline', v: v }); return this; };

  Plot.prototype.svg = function () {
    var o = this.o, W = o.w || 640, H = o.h || 400, ml = 64, mr = 14, mt = 12, mb = 44;
    var pw = W - ml - mr, ph = H - mt - mb, xr = this.xr.slice(), yr = this.yr.slice(), c = o.ylog || 0;
    var tf = c ? function (v) { return symlog(v, c); } : function (v) { return v; };
    if (o.xlim) xr = o.xlim.slice();
    if (o.ylim) yr = o.ylim.slice();
    if (!(xr[1] >= xr[0])) xr = [0, 1];
    if (!(yr[1] >= yr[0])) yr = [0, 1];
    if (o.xcats) xr = [-0.5, o.xcats.length - 0.5];
    else if (!o.xlim) { var dx = (xr[1] - xr[0]) * 0.04 || Math.abs(xr[0]) * 0.1 || 1; xr = [xr[0] - dx, xr[1] + dx]; }
    var ty = [tf(yr[0]), tf(yr[1])];
    if (!o.ylim) { var dy = (ty[1] - ty[0]) * 0.05 || Math.abs(ty[0]) * 0.1 || 1; ty = [ty[0] - dy, ty[1] + dy]; }
    else ty = [tf(yr[0]), tf(yr[1])];
    if (o.equal) { /* widen the axis with less data per pixel */
      var sx = (xr[1] - xr[0]) / pw, sy = (ty[1] - ty[0]) / ph, m;
      if (sx > sy) { m = 0.5 * (ty[0] + ty[1]); ty = [m - sx * ph / 2, m + sx * ph / 2]; }
      else { m = 0.5 * (xr[0] + xr[1]); xr = [m - sy * pw / 2, m + sy * pw / 2]; }
    }
    var X = function (v) { return ml + (v - xr[0]) / (xr[1] - xr[0]) * pw; };
    var Y = function (v) { return mt + ph - (tf(v) - ty[0]) / (ty[1] - ty[0]) * ph; };
    var svg = el('svg', { xmlns: NS, width: W, height: H, viewBox: '0 0 ' + W + ' ' + H, 'class': 'plot', role: 'img' });
    if (o.label) el('title', {}, svg).textContent = o.label;
    el('rect', { x: ml, y: mt, width: pw, height: ph, fill: '#fff', stroke: '#888' }, svg);
    var clipId = 'c' + Math.random().toString(36).slice(2);
    el('rect', { x: ml, y: mt, width: pw, height: ph }, el('clipPath', { id: clipId }, el('defs', {}, svg)));
    var g = el('g', { 'clip-path': 'url(#' + clipId + ')' }, svg), axes = el('g', { 'class': 'axes' }, svg);
    var hits = [];
    /* ticks and grid */
    var yl = c ? [wl_inv(ty[0], c), wl_inv(ty[1], c)] : ty;
    var yt = c ? ticksSymlog(yl[0], yl[1], c, Math.max(3, Math.floor(ph / 40))) : ticksLinear(ty[0], ty[1], Math.max(3, Math.floor(ph / 45)));
    if (o.ytickMax !== undefined) yt = yt.filter(function (v) { return v <= o.ytickMax; });
    var xt = o.xcats ? o.xcats.map(function (_, i) { return i; }) : ticksLinear(xr[0], xr[1], Math.max(3, Math.floor(pw / 70)));
    yt.forEach(function (v) {
      var y = f1(Y(v));
      el('path', { d: 'M' + ml + ' ' + y + 'H' + (ml + pw), stroke: v === 0 ? '#bbb' : '#eee' }, g);
      el('text', { x: ml - 5, y: y + 4, 'text-anchor': 'end', 'class': 'tick ytick' }, axes).textContent = o.yfmt ? o.yfmt(v) : tickLabel(v);
    });
    var lastx = -1e9;
    xt.forEach(function (v, i) {
      var x = f1(X(v));
      el('path', { d: 'M' + x + ' ' + mt + 'V' + (mt + ph), stroke: '#f0f0f0' }, g);
      if (x - lastx < 18) return;
      lastx = x;
      var label = o.xcats ? String(o.xcats[i]) : tickLabel(v);
      if (o.xcats && label.length > 14) label = label.slice(0, 13) + '\u2026';
      el('text', { x: x, y: mt + ph + 16, 'text-anchor': 'middle', 'class': 'tick xtick' }, axes).textContent = label;
    });
    if (o.xlabel) el('text', { x: ml + pw / 2, y: H - 8, 'text-anchor': 'middle', 'class': 'alabel' }, axes).textContent = o.xlabel;
    if (o.ylabel) el('text', { x: 14, y: mt + ph / 2, 'text-anchor': 'middle', transform: 'rotate(-90 14 ' + (mt + ph / 2) + ')', 'class': 'alabel' }, axes).textContent = o.ylabel;
    /* items in order */
    this.items.forEach(function (it) {
      var i, d, p;
      if (it.t === 'band') {
        var b = it.b, a0, a1;
        if (b.vertical) { a0 = X(Math.max(b.a, xr[0])); a1 = X(Math.min(b.b, xr[1])); if (a1 > a0) el('rect', { x: a0, y: mt, width: a1 - a0, height: ph, fill: b.color, 'fill-opacity': b.opacity || 0.18 }, g); }
        else {
          a0 = b.b === Infinity ? mt : Y(b.b); a1 = b.a === -Infinity ? mt + ph : Y(b.a);
          a0 = Math.max(mt, a0); a1 = Math.min(mt + ph, a1);
          if (a1 > a0) el('rect', { x: ml, y: a0, width: pw, height: a1 - a0, fill: b.color, 'fill-opacity': b.opacity || 0.18 }, g);
          if (b.text) el('text', { x: b.anchor === 'end' ? ml + pw - 6 : ml + 6, y: a0 + 13, 'text-anchor': b.anchor || 'start', 'class': 'bandlabel' }, g).textContent = b.text;
        }
      } else if (it.t === 'line') {
        var l = it.l; d = ''; var pen = false;
        for (i = 0; i < l.x.length; i++) {
          if (!isFinite(l.x[i]) || !isFinite(l.y[i])) { pen = false; continue; }
          d += (pen ? 'L' : 'M') + X(l.x[i]).toFixed(1) + ' ' + Y(l.y[i]).toFixed(1);
          pen = true;
        }
        if (d) el('path', { d: d, fill: 'none', stroke: l.color || '#000', 'stroke-width': l.width || 1.5, 'stroke-dasharray': l.dash || null, 'stroke-opacity': l.opacity || null, 'stroke-linejoin': 'round' }, g);
      } else if (it.t === 'points') {
        /* style on the group, geometry on the markers: many points stay cheap.
         * With p.ids, each marker carries data-i (for a page's own tooltip
         * and click handling) instead of a title and a link. */
        p = it.p;
        var filled = p.filled !== false, col = p.color || '#000';
        var pg = el('g', { 'class': p.cls || null, stroke: col, fill: filled ? col : '#fff', 'stroke-width': filled ? 0.8 : 1.4 }, g);
        if (p.ids) { /* many markers: one path, and their places for the page's hit test */
          d = '';
          var n0 = hits.length;
          for (i = 0; i < p.x.length; i++) {
            if (!isFinite(p.x[i]) || !isFinite(p.y[i])) continue;
            var hx = X(p.x[i]), hy = Y(p.y[i]);
            d += markPath(p.shape || 'circle', hx, hy, p.r || 4);
            hits.push([hx, hy, p.ids[i]]);
          }
          el('path', { d: d, 'data-n': hits.length - n0 }, pg);
          return;
        }
        for (i = 0; i < p.x.length; i++) {
          if (!isFinite(p.x[i]) || !isFinite(p.y[i])) continue;
          var px = X(p.x[i]), py = Y(p.y[i]), parent = pg, m;
          if (p.hrefs && p.hrefs[i]) parent = el('a', { href: p.hrefs[i] }, pg);
          if (p.lo && isFinite(p.lo[i]) && isFinite(p.hi[i]))
            el('path', { d: 'M' + f1(px) + ' ' + f1(Y(p.lo[i])) + 'V' + f1(Y(p.hi[i])) + 'M' + f1(px - 4) + ' ' + f1(Y(p.lo[i])) + 'h8M' + f1(px - 4) + ' ' + f1(Y(p.hi[i])) + 'h8', 'stroke-width': 1.3, fill: 'none' }, parent);
          m = mark(parent, p.shape || 'circle', px, py, p.r || 4, null, filled, p.titles ? p.titles[i] : null);
          if (p.ids) m.a['data-i'] = p.ids[i];
        }
      } else if (it.t === 'text') {
        el('text', { x: X(it.x.x) + (it.x.dx || 0), y: Y(it.x.y) + (it.x.dy || 0), 'text-anchor': it.x.anchor || 'start', fill: it.x.color || '#333', 'class': 'ptext' }, g).textContent = it.x.text;
      } else if (it.t === 'vline') {
        var x = X(it.v.at);
        el('path', { d: 'M' + x + ' ' + mt + 'V' + (mt + ph), stroke: it.v.color || '#000', 'stroke-dasharray': it.v.dash || null, 'stroke-width': it.v.width || 1.2 }, g);
        if (it.v.label) el('text', { x: x + 4, y: mt + 13, 'class': 'ptext' }, g).textContent = it.v.label;
      } else if (it.t === 'hline') {
        var y = Y(it.v.at);
        el('path', { d: 'M' + ml + ' ' + y + 'H' + (ml + pw), stroke: it.v.color || '#000', 'stroke-dasharray': it.v.dash || null, 'stroke-width': it.v.width || 1 }, g);
      }
    });
    this.X = X; this.Y = Y;
    var box = document.createElement('div');
    box.innerHTML = markup(svg);
    box.firstChild.wlHits = hits; /* [x, y, id] in the SVG's pixels, for hit tests */
    return box.firstChild;
  };
  function wl_inv(s, c) { /* inverse of symlog */
    var a = Math.abs(s);
    return a <= c * SYMA ? s / SYMA : (s < 0 ? -1 : 1) * c * Math.pow(10, a / c - SYMA);
  }
  /* HTML legend: entries [{kind: 'band'|'line'|'dash'|'mark', color, shape, filled, label}] */
  function legend(entries) {
    return '<div class="legend">' + entries.map(function (e) {
      return '<span>' + swatch(e.kind || 'mark', e.color, e.shape, e.filled !== false) + esc(e.label) + '</span>';
    }).join('') + '</div>';
  }

  return {
    fmt: { fixed: fixed, place: place, pm: pm, value: value, sig: sig },
    tq975: tq975, tAbsCdf: tAbsCdf, stats: stats,
    ticksLinear: ticksLinear, ticksSymlog: ticksSymlog, symlog: symlog, tickLabel: tickLabel,
    PALETTE: PALETTE, SHAPES: SHAPES, esc: esc, el: el, mark: mark, swatch: swatch, legend: legend,
    Plot: Plot
  };
})();
