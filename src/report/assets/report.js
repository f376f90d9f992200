/* report.js: the sweep report page (report.html).  Reads the runs embedded
 * in the page as JSON (written by src/report/html.c) and draws, without any
 * request: the runs table (compact or every column, a column chooser, sort,
 * filter, pages), the groups of replicates with their means and 95%
 * intervals (Student t), and the sweep plots of curvature and signed radius.
 * Numbers for people go through wl.fmt (the rule of src/core/numfmt.h). */
'use strict';
(function () {
  var t0 = performance.now();
  var D = JSON.parse(document.getElementById('wl-data').textContent), tparse = performance.now() - t0;
  var NC = D.cols.length, COL = {}, rows = D.rows, PARAMS = D.cols.slice(0, D.nparams);
  D.cols.forEach(function (c, i) { COL[c] = i; });
  var KPM = 2 + NC, RPM = 3 + NC; /* the C-formatted "value ± half" of curvature and radius */
  var fmt = wl.fmt, esc = wl.esc;

  function cell(r, key) { var j = COL[key]; return j === undefined ? '' : r[2 + j]; }
  var numCache = {};
  function nums(key) { /* the column as numbers, NaN where empty or text */
    if (numCache[key]) return numCache[key];
    var a = new Float64Array(rows.length), j = COL[key], i, s;
    for (i = 0; i < rows.length; i++) {
      s = j === undefined ? '' : rows[i][2 + j];
      a[i] = s === '' ? NaN : Number(s);
    }
    return (numCache[key] = a);
  }
  var numericCache = {};
  function numericCol(key) { /* every non-empty cell a number (the parsed column is kept for sorting) */
    if (key in numericCache) return numericCache[key];
    var j = COL[key], a, i, any = false, ok = true;
    if (j === undefined) return (numericCache[key] = false);
    a = nums(key);
    for (i = 0; i < rows.length && ok; i++) {
      if (rows[i][2 + j] === '') continue;
      if (isNaN(a[i])) ok = false; else any = true;
    }
    return (numericCache[key] = ok && any);
  }
  function runHref(r) {
    return encodeURI(r[1]) + '/run.html#run=' + encodeURIComponent(cell(r, 'id') + '.' + cell(r, 'segment'));
  }
  var hasVerdict = COL.verdict !== undefined && rows.some(function (r) { return cell(r, 'verdict') !== ''; });

  /* ---- column definitions ------------------------------------------------ */
  var DEF = {}, ORDER = [];
  function def(key, d) { d.key = key; DEF[key] = d; ORDER.push(key); return d; }
  function numText(s, digits) { /* a cell for people: integers as they are, else rounded */
    if (s === '' || isNaN(Number(s))) return esc(s);
    if (/^-?\d+$/.test(s)) return s;
    return '<span title="' + esc(s) + '">' + esc(fmt.sig(Number(s), digits || 4)) + '</span>';
  }
  def('clip', { label: 'clip', text: true, sortText: function (r) { return r[0]; },
    html: function (r) { return '<a href="' + runHref(r) + '" title="run page: plots, spectrum, messages">' + esc(r[0]) + '</a>'; } });
  def('thumb', { label: 'path', nosort: true, text: true,
    html: function (r) { return '<a href="' + runHref(r) + '"><img class="thumb" alt="path" src="' + encodeURI(r[1]) + '/path_m.png"></a>'; } });
  PARAMS.forEach(function (p) {
    var isnum = numericCol(p);
    def(p, { label: p, param: true, text: !isnum, sortNum: isnum ? p : null,
      sortText: function (r) { return cell(r, p); }, html: function (r) { return esc(cell(r, p)); } });
  });
  if (COL.id !== undefined)
    def('id', { label: 'robot', title: 'robot id (id)', sortNum: numericCol('id') ? 'id' : null, text: !numericCol('id'),
      sortText: function (r) { return cell(r, 'id'); }, html: function (r) { return esc(cell(r, 'id')); } });
  if (COL.verdict !== undefined)
    def('verdict', { label: 'verdict', text: true, sortText: function (r) { return { ok: '0', check: '1', reject: '2' }[cell(r, 'verdict')] || '3'; },
      html: function (r) {
        var v = cell(r, 'verdict'), why = cell(r, 'verdict_reasons');
        if (!v) return '';
        return '<span class="verdict v-' + esc(v) + '" title="' + esc(why ? why.split('; ').join('\n') : 'no reasons given') + '">' + esc(v) + '</span>';
      } });
  if (COL.radius_m !== undefined)
    def('radius', { label: 'radius (m)', title: 'signed turning radius, + counter-clockwise, \u00b1 half the 95% interval (1 / the curvature interval)',
      sortNum: 'radius_m', html: function (r) {
        if (cell(r, 'straight') === 'true') return '<span class="straight">straight</span>';
        return '<span title="' + esc(cell(r, 'radius_m')) + ' m">' + esc(r[RPM]) + '</span>';
      } });
  if (COL.curvature_per_m !== undefined)
    def('curvature', { label: 'curvature (1/m)', title: 'signed curvature, + counter-clockwise, \u00b1 half the 95% interval',
      sortNum: 'curvature_per_m', html: function (r) {
        return '<span title="' + esc(cell(r, 'curvature_per_m')) + ' [' + esc(cell(r, 'curvature_ci95_per_m_lo')) + ', ' + esc(cell(r, 'curvature_ci95_per_m_hi')) + '] /m">' + esc(r[KPM]) + '</span>';
      } });
  var NICE = { straightness: 'straightness', mean_speed_mps: 'mean speed (m/s)', yaw_osc_freq_hz: 'yaw osc. freq. (Hz)',
    yaw_osc_amp_deg: 'yaw osc. amp. (\u00b0)', tracked_fraction: 'tracked (%)' };
  Object.keys(NICE).forEach(function (k) {
    if (COL[k] === undefined) return;
    def(k, { label: NICE[k], title: k, sortNum: k, html: function (r) {
      var s = cell(r, k);
      if (s === '') return '';
      return '<span title="' + esc(s) + '">' + esc(k === 'tracked_fraction' ? fmt.sig(100 * Number(s), 3) : fmt.sig(Number(s), 3)) + '</span>';
    } });
  });
  D.cols.forEach(function (c) {
    if (DEF[c]) return;
    var isnum = numericCol(c);
    def(c, { label: c, text: !isnum, sortNum: isnum ? c : null, sortText: function (r) { return cell(r, c); },
      html: function (r) { return c === 'verdict_reasons' ? esc(cell(r, c)) : numText(cell(r, c)); } });
  });
  var tdefs = performance.now() - t0;
  var COMPACT = ['clip'].concat(PARAMS, ['id'], hasVerdict ? ['verdict'] : [],
    ['radius', 'curvature', 'straightness', 'mean_speed_mps', 'yaw_osc_freq_hz', 'yaw_osc_amp_deg', 'tracked_fraction'])
    .filter(function (k) { return DEF[k]; });
  var ALL = ORDER.filter(function (k) { return k !== 'verdict' || hasVerdict; });

  /* ---- state, from the address's #... -------------------------------------- */
  var S = { cols: COMPACT.slice(), sort: null, desc: false, q: '', headline: true, page: 0, size: 100,
    group: null, x: D.x_col || null, by: D.group_col || null };
  (function readHash() {
    var h = decodeURIComponent(location.hash.replace(/^#/, ''));
    h.split('&').forEach(function (kv) {
      var i = kv.indexOf('='), k = kv.slice(0, i), v = kv.slice(i + 1);
      if (i < 0) return;
      if (k === 'sort') { var p = v.split(','); if (DEF[p[0]] || COL[p[0]] !== undefined) { S.sort = p[0]; S.desc = p[1] === 'desc'; } }
      else if (k === 'q') S.q = v;
      else if (k === 'cols') S.cols = v === 'all' ? ALL.slice() : v === 'compact' ? COMPACT.slice() : v.split(',').filter(function (c) { return DEF[c]; });
      else if (k === 'group') S.group = v ? v.split(',').filter(function (c) { return PARAMS.indexOf(c) >= 0; }) : [];
      else if (k === 'x') S.x = v;
      else if (k === 'by') S.by = v || null;
      else if (k === 'all') S.headline = v !== '1';
      else if (k === 'page') S.page = Math.max(0, parseInt(v, 10) - 1 || 0);
    });
    if (S.sort && !DEF[S.sort]) def(S.sort, { label: S.sort, sortNum: S.sort, html: function (r) { return numText(cell(r, S.sort)); } });
  })();
  function writeHash() {
    var parts = [];
    if (S.sort) parts.push('sort=' + S.sort + (S.desc ? ',desc' : ''));
    if (S.q) parts.push('q=' + S.q);
    if (S.cols.join() === ALL.join()) parts.push('cols=all');
    else if (S.cols.join() !== COMPACT.join()) parts.push('cols=' + S.cols.join(','));
    if (S.group) parts.push('group=' + S.group.join(','));
    if (S.x && S.x !== D.x_col) parts.push('x=' + S.x);
    if (S.by !== (D.group_col || null)) parts.push('by=' + (S.by || ''));
    if (!S.headline) parts.push('all=1');
    if (S.page) parts.push('page=' + (S.page + 1));
    history.replaceState(null, '', parts.length ? '#' + parts.map(encodeURI).join('&') : location.pathname + location.search);
  }
  if (!S.group) { /* replicates: the sweep columns when the batch named them, else every parameter that repeats */
    if (D.x_col || D.group_col) S.group = [D.x_col, D.group_col].filter(function (c) { return c && PARAMS.indexOf(c) >= 0; });
    else S.group = PARAMS.filter(function (p) {
      var seen = {}, rep = false;
      if (/^(rep|replicate|trial|take|seed|date|time|run)/i.test(p)) return false;
      rows.forEach(function (r) { var v = cell(r, p); if (seen[v]) rep = true; seen[v] = 1; });
      return rep;
    });
  }

  /* ---- filter ------------------------------------------------------------- */
  var searchText = null;
  function parseFilter(q) { /* terms: "col op value" (op = < <= > >= = != ~) or free text */
    var preds = [], bad = [];
    q.trim().split(/\s+/).filter(Boolean).forEach(function (tok) {
      var m = /^([A-Za-z_][\w.]*)(<=|>=|!=|=|<|>|~)(.*)$/.exec(tok), key, v, num, a, isn;
      if (m && (COL[m[1]] !== undefined || m[1] === 'radius' || m[1] === 'curvature' || m[1] === 'robot')) {
        key = { radius: 'radius_m', curvature: 'curvature_per_m', robot: 'id' }[m[1]] || m[1];
        v = m[3]; num = Number(v); isn = v !== '' && !isNaN(num); a = isn ? nums(key) : null;
        preds.push(function (i) {
          var s = cell(rows[i], key), x = isn ? a[i] : s;
          switch (m[2]) {
            case '=': return isn ? x === num : s === v;
            case '!=': return isn ? x !== num : s !== v;
            case '~': return s.toLowerCase().indexOf(v.toLowerCase()) >= 0;
            case '<': return isn ? x < num : s < v;
            case '<=': return isn ? x <= num : s <= v;
            case '>': return isn ? x > num : s > v;
            default: return isn ? x >= num : s >= v;
          }
        });
      } else {
        if (m) bad.push(m[1]);
        if (!searchText) searchText = rows.map(function (r) {
          return [r[0]].concat(PARAMS.map(function (p) { return cell(r, p); }), [cell(r, 'verdict'), cell(r, 'verdict_reasons')]).join(' ').toLowerCase();
        });
        var t = tok.toLowerCase();
        preds.push(function (i) { return searchText[i].indexOf(t) >= 0; });
      }
    });
    return { preds: preds, bad: bad };
  }
  function selected() { /* indexes of the runs that pass the filter and the headline switch */
    var f = parseFilter(S.q), out = [], hl = COL.headline !== undefined && S.headline, i, k, ok;
    for (i = 0; i < rows.length; i++) {
      if (hl && cell(rows[i], 'headline') !== 'true') continue;
      for (ok = true, k = 0; k < f.preds.length && ok; k++) ok = f.preds[k](i);
      if (ok) out.push(i);
    }
    document.getElementById('filter-note').textContent = f.bad.length ? 'no column named ' + f.bad.join(', ') + ': searched as text' : '';
    return out;
  }
  function sortIdx(idx) {
    if (!S.sort) return idx;
    var d = DEF[S.sort], dir = S.desc ? -1 : 1, a;
    if (d.sortNum) {
      a = nums(d.sortNum);
      idx.sort(function (p, q) { /* empty last whatever the direction; stable by row */
        var x = a[p], y = a[q], nx = isNaN(x), ny = isNaN(y);
        if (nx || ny) return nx && ny ? p - q : nx ? 1 : -1;
        return x === y ? p - q : (x < y ? -dir : dir);
      });
    } else {
      idx.sort(function (p, q) {
        var x = d.sortText(rows[p]), y = d.sortText(rows[q]);
        if (x === '' || y === '') return x === y ? p - q : x === '' ? 1 : -1;
        return x === y ? p - q : (x < y ? -dir : dir);
      });
    }
    return idx;
  }

  /* ---- the runs table ------------------------------------------------------ */
  var view = [];
  function renderTable() {
    var tbl = document.getElementById('runs'), cols = S.cols.filter(function (k) { return DEF[k]; });
    var pages = Math.max(1, Math.ceil(view.length / S.size)), h = '', i, r, start, end;
    if (S.page >= pages) S.page = pages - 1;
    start = S.page * S.size; end = Math.min(view.length, start + S.size);
    h += '<thead><tr>' + cols.map(function (k) {
      var d = DEF[k], c = [d.text ? 't' : 'n'];
      if (d.nosort) c.push('nosort');
      if (S.sort === k) c.push(S.desc ? 'desc' : 'asc');
      return '<th class="' + c.join(' ') + '" data-col="' + esc(k) + '" title="' + esc(d.title || k) + (d.nosort ? '' : ' (click to sort)') + '">' + esc(d.label) + '</th>';
    }).join('') + '</tr></thead><tbody>';
    for (i = start; i < end; i++) {
      r = rows[view[i]];
      h += '<tr class="run' + (cell(r, 'headline') === 'false' ? ' other' : '') + '" data-row="' + view[i] + '">' + cols.map(function (k) {
        return '<td class="' + (DEF[k].text ? 't' : 'n') + '">' + DEF[k].html(r) + '</td>';
      }).join('') + '</tr>';
    }
    h += '</tbody>';
    tbl.innerHTML = h;
    document.getElementById('shown').textContent = view.length ? 'runs ' + (start + 1) + '\u2013' + end + ' of ' + view.length +
      (view.length < rows.length ? ' (' + rows.length + ' in all)' : '') : 'no run matches';
    document.getElementById('prev').disabled = S.page === 0;
    document.getElementById('next').disabled = S.page >= pages - 1;
    document.getElementById('colcount').textContent = cols.length + ' of ' + ALL.length;
  }
  document.getElementById('runs').addEventListener('click', function (e) {
    var th = e.target.closest('th');
    if (!th || th.classList.contains('nosort')) return;
    var k = th.getAttribute('data-col');
    if (S.sort === k) S.desc = !S.desc; else { S.sort = k; S.desc = false; }
    S.page = 0;
    sortIdx(view); renderTable(); writeHash();
  });

  /* ---- the column chooser -------------------------------------------------- */
  function renderChooser() {
    var box = document.getElementById('colboxes');
    box.innerHTML = ALL.map(function (k) {
      return '<label title="' + esc(DEF[k].title || k) + '"><input type="checkbox" value="' + esc(k) + '"' + (S.cols.indexOf(k) >= 0 ? ' checked' : '') + '> ' + esc(DEF[k].label) + '</label>';
    }).join('');
  }
  document.getElementById('colboxes').addEventListener('change', function () {
    var on = {};
    Array.prototype.forEach.call(this.querySelectorAll('input:checked'), function (c) { on[c.value] = 1; });
    S.cols = ALL.filter(function (k) { return on[k]; });
    renderTable(); writeHash();
  });
  document.getElementById('view-compact').addEventListener('click', function () { S.cols = COMPACT.slice(); renderChooser(); renderTable(); writeHash(); });
  document.getElementById('view-all').addEventListener('click', function () { S.cols = ALL.slice(); renderChooser(); renderTable(); writeHash(); });
  document.getElementById('prev').addEventListener('click', function () { S.page--; renderTable(); writeHash(); });
  document.getElementById('next').addEventListener('click', function () { S.page++; renderTable(); writeHash(); });
  document.getElementById('pagesize').addEventListener('change', function () { S.size = Number(this.value); S.page = 0; renderTable(); });

  /* ---- groups of replicates ---------------------------------------------- */
  var GM = [['curvature_per_m', 'curvature (1/m)'], ['radius', 'radius (m), from the mean curvature'],
    ['straightness', 'straightness'], ['mean_speed_mps', 'mean speed (m/s)'], ['yaw_osc_freq_hz', 'yaw osc. (Hz)'],
    ['yaw_osc_amp_deg', 'yaw osc. (\u00b0)'], ['tracked_fraction', 'tracked fraction']].filter(function (m) {
    return m[0] === 'radius' ? COL.curvature_per_m !== undefined : COL[m[0]] !== undefined;
  });
  function cmpVal(a, b) { var x = Number(a), y = Number(b); if (a !== '' && b !== '' && !isNaN(x) && !isNaN(y)) return x - y; return a < b ? -1 : a > b ? 1 : 0; }
  function groupsOf(idx, keys) { /* [{vals: [...], idx: [...]}] sorted by the key values */
    var map = {}, out = [];
    idx.forEach(function (i) {
      var vals = keys.map(function (k) { return cell(rows[i], k); }), key = vals.join('\u0001');
      if (!map[key]) { map[key] = { vals: vals, idx: [] }; out.push(map[key]); }
      map[key].idx.push(i);
    });
    out.sort(function (a, b) { for (var j = 0; j < keys.length; j++) { var c = cmpVal(a.vals[j], b.vals[j]); if (c) return c; } return 0; });
    return out;
  }
  /* The radius of a group: 1 / its mean curvature k, interval 1/(k -+ h).
   * Straight, like the measure stage's rule for one run, when that interval
   * contains 0 or when most of the group's runs are straight (a group of
   * straight runs whose mean curvature is just off 0 has no radius worth
   * plotting: hundreds of metres over a tank's width). */
  function radiusOf(k, h, idx) {
    var ns = 0;
    if (idx) idx.forEach(function (i) { if (cell(rows[i], 'straight') === 'true') ns++; });
    if (!isFinite(k) || k === 0 || (idx && 2 * ns > idx.length)) return { r: NaN, half: NaN, straight: true };
    if (!isFinite(h)) return { r: 1 / k, half: NaN, straight: false };
    if ((k - h) * (k + h) <= 0) return { r: NaN, half: NaN, straight: true, lo: NaN, hi: NaN };
    var a = 1 / (k + h), b = 1 / (k - h);
    return { r: 1 / k, half: 0.5 * Math.abs(b - a), lo: Math.min(a, b), hi: Math.max(a, b), straight: false };
  }
  function gstats(g, key) { return wl.stats(g.idx.map(function (i) { return nums(key)[i]; })); }
  function renderGroups(idx) {
    var keys = S.group, gs = groupsOf(idx, keys), h;
    document.getElementById('groupboxes').innerHTML = PARAMS.map(function (p) {
      return '<label><input type="checkbox" value="' + esc(p) + '"' + (keys.indexOf(p) >= 0 ? ' checked' : '') + '> ' + esc(p) + '</label>';
    }).join(' ') || '<em>the manifest has no parameter columns</em>';
    h = '<thead><tr>' + keys.map(function (k) { return '<th class="t" rowspan="2">' + esc(k) + '</th>'; }).join('') +
      '<th rowspan="2" title="runs in the group">n</th>' + GM.map(function (m) { return '<th colspan="2" class="mh">' + esc(m[1]) + '</th>'; }).join('') + '</tr><tr>' +
      GM.map(function () { return '<th title="mean \u00b1 half the 95% interval of the mean (Student t, n - 1 degrees of freedom)">mean \u00b1 95%</th><th title="sample standard deviation">sd</th>'; }).join('') + '</tr></thead><tbody>';
    gs.forEach(function (g) {
      h += '<tr class="group">' + g.vals.map(function (v) { return '<td class="t">' + esc(v) + '</td>'; }).join('') + '<td class="n">' + g.idx.length + '</td>';
      GM.forEach(function (m) {
        var st, txt, sd, attrs;
        if (m[0] === 'radius') {
          st = gstats(g, 'curvature_per_m');
          var rr = radiusOf(st.mean, st.half, g.idx);
          txt = rr.straight ? 'straight' : fmt.pm(rr.r, rr.half);
          attrs = ' data-key="radius" data-n="' + st.n + '" data-mean="' + rr.r + '"';
          h += '<td class="n gm"' + attrs + '>' + esc(txt) + '</td><td class="n"></td>';
          return;
        }
        st = gstats(g, m[0]);
        txt = st.n ? (st.n > 1 ? fmt.pm(st.mean, st.half) : fmt.sig(st.mean, 3)) : '';
        sd = st.n > 1 ? (isFinite(st.half) && st.half > 0 ? fmt.value(st.sd, st.half) : fmt.sig(st.sd, 2)) : '';
        attrs = ' data-key="' + m[0] + '" data-n="' + st.n + '" data-mean="' + st.mean + '" data-sd="' + st.sd + '" data-half="' + st.half + '"';
        h += '<td class="n gm"' + attrs + (st.n < g.idx.length ? ' title="' + st.n + ' of ' + g.idx.length + ' runs have a value"' : '') + '>' + esc(txt) +
          (st.n && st.n < g.idx.length ? ' <sup>n=' + st.n + '</sup>' : '') + '</td><td class="n">' + esc(sd) + '</td>';
      });
      h += '</tr>';
    });
    document.getElementById('groups').innerHTML = h + '</tbody>';
    document.getElementById('groupcount').textContent = gs.length + ' group' + (gs.length === 1 ? '' : 's') + ' of ' + idx.length + ' runs';
  }
  document.getElementById('groupboxes').addEventListener('change', function () {
    var on = {};
    Array.prototype.forEach.call(this.querySelectorAll('input:checked'), function (c) { on[c.value] = 1; });
    S.group = PARAMS.filter(function (p) { return on[p]; });
    renderGroups(view); writeHash();
  });

  /* ---- sweep plots ----------------------------------------------------------- */
  function fillSelect(id, opts, cur) {
    document.getElementById(id).innerHTML = opts.map(function (o) {
      return '<option value="' + esc(o[0]) + '"' + (o[0] === cur ? ' selected' : '') + '>' + esc(o[1]) + '</option>';
    }).join('');
  }
  function renderSweep(idx) {
    var box = document.getElementById('sweep-plots');
    if (!S.x || PARAMS.indexOf(S.x) < 0) S.x = PARAMS.filter(numericCol)[0] || PARAMS[0] || null;
    fillSelect('sweep-x', PARAMS.map(function (p) { return [p, p]; }), S.x);
    fillSelect('sweep-by', [['', '(none)']].concat(PARAMS.map(function (p) { return [p, p]; })), S.by || '');
    if (!S.x || COL.curvature_per_m === undefined) { box.innerHTML = '<p class="note">No parameter column to plot against: give the batch a manifest.</p>'; return; }
    var K = nums('curvature_per_m'), R = nums('radius_m'), numeric = numericCol(S.x), X = nums(S.x);
    var pts = idx.filter(function (i) { return isFinite(K[i]) && cell(rows[i], S.x) !== ''; });
    var cats = null, xOf;
    if (numeric) xOf = function (i) { return X[i]; };
    else {
      cats = groupsOf(pts, [S.x]).map(function (g) { return g.vals[0]; });
      var ci = {}; cats.forEach(function (c, j) { ci[c] = j; });
      xOf = function (i) { return ci[cell(rows[i], S.x)]; };
    }
    var vg = S.by ? groupsOf(pts, [S.by]) : [{ vals: [''], idx: pts }];
    var body = D.body_m > 0 ? D.body_m : 0, c = body > 0 ? body : 0.1;
    var xs = pts.map(xOf), xspan = (Math.max.apply(null, xs.concat([0])) - Math.min.apply(null, xs.concat([0]))) || 1;
    /* variants side by side (a plot is about 500 px wide: 0.03 of the span
     * is some 15 px), each run a little left of its group's mean */
    var step = cats ? 0.2 : 0.03 * xspan, G = vg.length, runShift = cats ? 0.08 : 0.014 * xspan;
    var kmax = 0, amax = 0;
    var series = vg.map(function (g, gi) { /* per variant: runs and the means at each x */
      var dx = G > 1 ? step * (gi - 0.5 * (G - 1)) : 0, color = wl.PALETTE[gi % 8], shape = wl.SHAPES[gi % 6];
      var runs = g.idx.map(function (i) {
        kmax = Math.max(kmax, Math.abs(K[i]));
        if (isFinite(R[i])) amax = Math.max(amax, Math.abs(R[i]));
        return i;
      });
      var means = groupsOf(g.idx, [S.x]).map(function (xg) {
        var st = wl.stats(xg.idx.map(function (i) { return K[i]; })), rr = radiusOf(st.mean, st.half, xg.idx);
        kmax = Math.max(kmax, Math.abs(st.mean) + (isFinite(st.half) ? st.half : 0));
        if (!rr.straight) amax = Math.max(amax, Math.abs(isFinite(rr.half) ? Math.max(Math.abs(rr.lo), Math.abs(rr.hi)) : rr.r));
        return { x: xOf(xg.idx[0]) + dx, st: st, rr: rr, label: xg.vals[0] };
      });
      return { name: g.vals[0] || '(none)', dx: dx, color: color, shape: shape, runs: runs, means: means };
    });
    var straightY, tk = wl.symlog;
    /* curvature, linear; the body-size band is shown when it is near the
     * data, not allowed to squash the data into the middle */
    if (!(kmax > 0)) kmax = 1;
    var bandNote = '';
    if (body > 0 && 1 / body < 1.6 * kmax) kmax = Math.max(kmax, 1.15 / body);
    else if (body > 0) bandNote = ' (|curvature| > ' + fmt.sig(1 / body, 2) + ' /m, beyond the curvature axis)';
    var pk = new wl.Plot({ w: 620, h: 400, xlabel: S.x, ylabel: 'curvature (1/m), + counter-clockwise', xcats: cats,
      ylim: [-1.08 * kmax, 1.08 * kmax], label: 'curvature against ' + S.x });
    if (body > 0) {
      pk.band({ a: 1 / body, b: Infinity, color: '#D55E00', opacity: 0.12 });
      pk.band({ a: -Infinity, b: -1 / body, color: '#D55E00', opacity: 0.12 });
    }
    /* signed radius, symmetric log, with a band for straight runs on top */
    amax = Math.max(amax * 1.3, c * 10);
    var tlo = tk(-amax, c), thi0 = tk(amax, c), hb = 0.16 * (thi0 - tlo);
    var inv = function (s) { var a = Math.abs(s), A = 1 / (1 - 0.1); return a <= c * A ? s / A : (s < 0 ? -1 : 1) * c * Math.pow(10, a / c - A); };
    straightY = inv(thi0 + 0.55 * hb);
    var pr = new wl.Plot({ w: 620, h: 400, xlabel: S.x, ylabel: 'radius (m), + counter-clockwise; symmetric log', xcats: cats,
      ylog: c, ylim: [-amax, inv(thi0 + hb)], label: 'signed radius against ' + S.x,
      ytickMax: amax * 1.0001 });
    pr.band({ a: inv(thi0 + 0.08 * hb), b: Infinity, color: '#999', opacity: 0.18, text: 'straight', anchor: 'end' });
    if (body > 0) pr.band({ a: -body, b: body, color: '#D55E00', opacity: 0.12 });
    series.forEach(function (s) {
      var rx = [], rk = [], rrx = [], rr = [], rst = [], tk1 = [], tr1 = [], ts1 = [];
      s.runs.forEach(function (i) {
        /* a run sits a little left of its group's mean, so that the mean does
         * not hide it; its marker carries the row (tooltip and link below) */
        var x = xOf(i) + s.dx - runShift;
        rx.push(x); rk.push(K[i]); tk1.push(i);
        if (isFinite(R[i]) && cell(rows[i], 'straight') !== 'true') { rrx.push(x); rr.push(R[i]); tr1.push(i); }
        else { rst.push(x); ts1.push(i); }
      });
      var mx = s.means.map(function (m) { return m.x; });
      var mk = s.means.map(function (m) { return m.st.mean; });
      var mlo = s.means.map(function (m) { return m.st.mean - m.st.half; }), mhi = s.means.map(function (m) { return m.st.mean + m.st.half; });
      var mtitle = s.means.map(function (m) { return s.name + ', ' + S.x + ' ' + m.label + ': mean of ' + m.st.n + ' runs ' + (m.st.n > 1 ? fmt.pm(m.st.mean, m.st.half) : fmt.sig(m.st.mean, 3)) + ' /m (95%)'; });
      pk.line({ x: mx, y: mk, color: s.color, width: 1, opacity: 0.6 });
      pk.points({ x: rx, y: rk, color: s.color, shape: s.shape, r: 3, filled: false, ids: tk1, cls: 'runpt' });
      pk.points({ x: mx, y: mk, lo: mlo, hi: mhi, color: s.color, shape: s.shape, r: 5.5, filled: true, titles: mtitle, cls: 'meanpt' });
      var Mx = [], My = [], Mlo = [], Mhi = [], Mt = [], Sx = [], St = [];
      s.means.forEach(function (m, j) {
        if (m.rr.straight) { Sx.push(m.x); St.push(mtitle[j] + ': straight'); return; }
        Mx.push(m.x); My.push(m.rr.r); Mlo.push(m.rr.lo); Mhi.push(m.rr.hi); Mt.push(mtitle[j].replace(/ \/m \(95%\)$/, '') + ' /m, radius ' + fmt.pm(m.rr.r, m.rr.half) + ' m');
      });
      /* the means joined in x order, but never through a straight group or
       * across a change of sign: a radius goes from + to - through
       * infinity (straight), not through 0 */
      var Lx = [], Ly = [], prev = null;
      s.means.forEach(function (m) {
        var y = m.rr.straight ? NaN : m.rr.r;
        if (prev !== null && isFinite(prev) && isFinite(y) && prev * y < 0) { Lx.push(NaN); Ly.push(NaN); }
        Lx.push(m.x); Ly.push(y); prev = y;
      });
      pr.line({ x: Lx, y: Ly, color: s.color, width: 1, opacity: 0.6 });
      pr.points({ x: rrx, y: rr, color: s.color, shape: s.shape, r: 3, filled: false, ids: tr1, cls: 'runpt' });
      pr.points({ x: rst, y: rst.map(function () { return straightY; }), color: s.color, shape: s.shape, r: 3, filled: false, ids: ts1, cls: 'runpt' });
      pr.points({ x: Mx, y: My, lo: Mlo, hi: Mhi, color: s.color, shape: s.shape, r: 5.5, filled: true, titles: Mt, cls: 'meanpt' });
      pr.points({ x: Sx, y: Sx.map(function () { return straightY; }), color: s.color, shape: s.shape, r: 5.5, filled: true, titles: St, cls: 'meanpt' });
    });
    var leg = series.length > 1 || S.by ? series.map(function (s) { return { color: s.color, shape: s.shape, label: (S.by ? S.by + ' ' : '') + s.name }; }) : [];
    leg.push({ color: '#555', shape: 'circle', filled: false, label: 'one run (click: its page)' });
    leg.push({ color: '#555', shape: 'circle', filled: true, label: 'mean of the runs at one ' + S.x + ', bar: 95% interval (Student t)' });
    if (body > 0) leg.push({ kind: 'band', color: '#D55E00', label: '|radius| < 1 body diameter (' + fmt.sig(body, 2) + ' m)' + bandNote });
    leg.push({ kind: 'band', color: '#999', label: 'straight: no radius (curvature interval contains 0, short arc, or most runs of a group straight)' });
    box.innerHTML = '';
    [[pk, 'Curvature'], [pr, 'Signed radius']].forEach(function (p) {
      var fig = document.createElement('figure');
      fig.className = 'sweep';
      fig.appendChild(p[0].svg());
      var cap = document.createElement('figcaption');
      cap.textContent = p[1] + ' against ' + S.x + (S.by ? ', by ' + S.by : '') + ' (' + pts.length + ' runs)';
      fig.appendChild(cap);
      box.appendChild(fig);
    });
    box.insertAdjacentHTML('beforeend', wl.legend(leg));
  }
  /* the runs' markers are drawn as one path per variant: the run under the
   * pointer is found from their places (the nearest within 7 px), for a
   * tooltip on hover and the run page on click */
  var tip = document.getElementById('tip'), plots = document.getElementById('sweep-plots');
  function runAt(e) {
    var svg = e.target.closest && e.target.closest('svg.plot'), rc, sx, sy, best = -1, bd = 49, k, h, d;
    if (!svg || !svg.wlHits) return -1;
    rc = svg.getBoundingClientRect();
    sx = (e.clientX - rc.left) * svg.viewBox.baseVal.width / rc.width;
    sy = (e.clientY - rc.top) * svg.viewBox.baseVal.height / rc.height;
    for (k = 0; k < svg.wlHits.length; k++) {
      h = svg.wlHits[k]; d = (h[0] - sx) * (h[0] - sx) + (h[1] - sy) * (h[1] - sy);
      if (d < bd) { bd = d; best = h[2]; }
    }
    return best;
  }
  plots.addEventListener('mousemove', function (e) {
    var i = runAt(e), r;
    e.target.closest && e.target.closest('svg.plot') && (e.target.closest('svg.plot').style.cursor = i < 0 ? '' : 'pointer');
    if (i < 0) { tip.style.display = 'none'; return; }
    r = rows[i];
    tip.textContent = r[0] + ' (robot ' + cell(r, 'id') + '): curvature ' + r[KPM] + ' /m' +
      (cell(r, 'straight') === 'true' ? ', straight' : ', radius ' + r[RPM] + ' m') + ' (click: its page)';
    tip.style.left = (e.clientX + 12) + 'px'; tip.style.top = (e.clientY + 12) + 'px'; tip.style.display = 'block';
  });
  plots.addEventListener('mouseleave', function () { tip.style.display = 'none'; });
  plots.addEventListener('click', function (e) { var i = runAt(e); if (i >= 0) location.href = runHref(rows[i]); });
  document.getElementById('sweep-x').addEventListener('change', function () { S.x = this.value; renderSweep(view); writeHash(); });
  document.getElementById('sweep-by').addEventListener('change', function () { S.by = this.value || null; renderSweep(view); writeHash(); });

  /* ---- filter box and headline switch -------------------------------------- */
  var fbox = document.getElementById('filter'), timer = null;
  fbox.value = S.q;
  var T = {};
  function refilter() {
    var a = performance.now(), b, c, d;
    view = sortIdx(selected());
    S.page = Math.min(S.page, Math.max(0, Math.ceil(view.length / S.size) - 1));
    renderTable(); b = performance.now();
    renderGroups(view); c = performance.now();
    renderSweep(view); d = performance.now();
    writeHash();
    T.table_ms = b - a; T.groups_ms = c - b; T.sweep_ms = d - c;
  }
  fbox.addEventListener('input', function () { clearTimeout(timer); timer = setTimeout(function () { S.q = fbox.value; S.page = 0; refilter(); }, 150); });
  var hl = document.getElementById('headline');
  hl.checked = S.headline;
  if (COL.headline === undefined) hl.parentNode.style.display = 'none';
  hl.addEventListener('change', function () { S.headline = hl.checked; S.page = 0; refilter(); });
  if (!hasVerdict) document.getElementById('verdict-note').textContent =
    'These summaries carry no verdicts (a later measure stage adds them); the verdict column is left out.';

  renderChooser();
  refilter();
  T.ready_ms = performance.now() - t0;
  T.parse_ms = tparse;
  T.defs_ms = tdefs;
  window.wlReport = { timing: T, state: S, data: D, defs: ALL, stats: wl.stats, fmt: fmt, tq975: wl.tq975 };
  document.body.setAttribute('data-ready', '1');
  window.addEventListener('load', function () { /* for headless checks: every image present */
    var im = document.images, ok = 0, k;
    for (k = 0; k < im.length; k++) if (im[k].complete && im[k].naturalWidth > 0) ok++;
    document.body.setAttribute('data-images-total', String(im.length));
    document.body.setAttribute('data-images-loaded', String(ok));
  });
})();
