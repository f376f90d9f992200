/* run.js: the page of one clip folder (run.html).  Draws, from the data
 * embedded by src/report/runpage.c and without any request, a section per
 * run (robot x segment): key numbers, verdict and uncertainty budget, the
 * path on the tank with the fitted circle, heading / yaw rate / speed over
 * time with the rows left out shaded, the yaw spectrum with its fitted peak
 * and the circle's residuals; then the clean stage's account, the messages
 * of process.log and the trail image. */
'use strict';
(function () {
  var D = JSON.parse(document.getElementById('wl-data').textContent), esc = wl.esc, fmt = wl.fmt;
  var BLUE = '#0072B2', ORANGE = '#E69F00', VERM = '#D55E00', GREEN = '#009E73', GREY = '#999';

  function robot(id) { for (var i = 0; i < D.robots.length; i++) if (D.robots[i].id === id) return D.robots[i]; return null; }
  function nums(a) { return a.map(function (v) { return v === null ? NaN : v; }); }
  function spans(t, seg, pred) { /* [t0, t1] of runs of rows where pred(seg) */
    var out = [], s = null, i;
    for (i = 0; i < t.length; i++) {
      if (pred(seg[i])) { if (s === null) s = t[i]; }
      else if (s !== null) { out.push([s, t[i]]); s = null; }
    }
    if (s !== null && t.length) out.push([s, t[t.length - 1]]);
    return out;
  }
  function figure(parent, plot, caption, legend) {
    var f = document.createElement('figure');
    f.appendChild(plot.svg());
    if (legend) f.insertAdjacentHTML('beforeend', wl.legend(legend));
    var c = document.createElement('figcaption');
    c.textContent = caption;
    f.appendChild(c);
    parent.appendChild(f);
    return f;
  }

  /* ---- head: parameters and files ---- */
  var head = document.getElementById('head'), h = '', keys = Object.keys(D.params || {});
  if (keys.length) h += '<table class="kv" id="params"><tbody>' + keys.map(function (k) {
    return '<tr><td>' + esc(k) + '</td><td>' + esc(D.params[k]) + '</td></tr>';
  }).join('') + '</tbody></table>';
  else h += '<p class="note">No manifest parameters (the clip was processed on its own, or its batch had no manifest row for it).</p>';
  h += '<p class="note">Files in this folder: ' + (D.files || []).map(function (f) { return '<a href="' + encodeURI(f) + '">' + esc(f) + '</a>'; }).join(', ') +
    '. Numbers here are rounded to what their intervals support; summary.json has them at full precision.</p>';
  head.innerHTML = h;

  /* ---- a section per run ---- */
  var box = document.getElementById('runs');
  if (D.runs.length > 1) document.getElementById('runnav').innerHTML = 'Runs: ' + D.runs.map(function (r) {
    return '<a href="#run=' + encodeURIComponent(r.id + '.' + r.segment) + '">robot ' + esc(r.id) + ', segment ' + r.segment + (r.summary.headline ? ' (headline)' : '') + '</a>';
  }).join(' ');
  D.runs.forEach(function (run) {
    var S = run.summary, sec = document.createElement('section'), rb = robot(run.id), seg = run.segment;
    sec.id = 'run-' + run.id + '.' + seg;
    sec.className = 'run';
    var v = S.verdict, reasons = S.verdict_reasons || [];
    var hh = '<h2>Robot ' + esc(run.id) + ', segment ' + seg + (S.headline ? ' <span class="note">(headline: the robot\'s longest)</span>' : '') +
      (v ? ' <span class="verdict v-' + esc(v) + '" title="' + esc(reasons.join('\n') || 'no reasons given') + '">' + esc(v) + '</span>' : '') + '</h2>';
    if (v && reasons.length) hh += '<ul class="reasons">' + reasons.map(function (x) { return '<li>' + esc(x) + '</li>'; }).join('') + '</ul>';
    else if (!v) hh += '<p class="note">No verdict in this summary (a later measure stage adds one).</p>';
    hh += '<div class="panels"><table class="kv numbers"><thead><tr><th class="t">measure</th><th class="n">value</th></tr></thead><tbody>' +
      run.numbers.map(function (n) { return '<tr><td>' + esc(n[0]) + '</td><td class="n" title="' + esc(n[2]) + '">' + esc(n[1]) + '</td></tr>'; }).join('') +
      '</tbody></table>';
    var B = S.budget;
    if (B && typeof B === 'object' && Object.keys(B).length) {
      hh += '<table class="budget"><thead><tr><th class="t">uncertainty budget</th><th class="t">source</th><th class="n">standard error</th><th class="t">share of the variance</th></tr></thead><tbody>';
      Object.keys(B).forEach(function (k) {
        var b = B[k], src = b.sources || [];
        hh += '<tr class="total"><td class="t"><b>' + esc(k) + '</b></td><td class="t">total (95%: \u00b1' + esc(fmt.sig(1.959964 * b.total_se, 2)) + ')</td><td class="n">' + esc(fmt.sig(b.total_se, 2)) + '</td><td></td></tr>';
        src.forEach(function (s) {
          var sh = Math.max(0, Math.min(1, s.share || 0));
          hh += '<tr class="source"><td></td><td class="t">' + esc(s.source) + '</td><td class="n">' + esc(fmt.sig(s.se, 2)) + '</td><td class="t"><span class="share" style="width:' + (100 * sh).toFixed(0) + 'px"></span> ' + (100 * sh).toFixed(0) + '%</td></tr>';
        });
      });
      hh += '</tbody></table>';
    } else hh += '<p class="note budget-none">No uncertainty budget in this summary: the interval above covers the fit only (a later measure stage adds calibration and heights).</p>';
    hh += '</div><div class="panels plots"></div>';
    sec.innerHTML = hh;
    box.appendChild(sec);
    var plots = sec.querySelector('.plots');
    if (!rb) { plots.innerHTML = '<p class="note">No clean.csv rows for robot ' + esc(run.id) + ': no plots.</p>'; return; }
    var t = nums(rb.t), x = nums(rb.x), y = nums(rb.y), sg = rb.seg;
    var inRun = sg.map(function (s) { return s === seg; });

    /* the path on the tank */
    var pp = new wl.Plot({ w: 560, h: 480, xlabel: 'x (m)', ylabel: 'y (m)', equal: true, label: 'path on the tank' });
    var ol = (D.scene && D.scene.outline) || [];
    if (ol.length >= 2) pp.line({ x: ol.map(function (p) { return p[0]; }).concat([ol[0][0]]), y: ol.map(function (p) { return p[1]; }).concat([ol[0][1]]), color: '#333', width: 1.2 });
    ((D.scene && D.scene.markers) || []).forEach(function (m) {
      pp.points({ x: [m[0]], y: [m[1]], color: '#666', shape: 'square', r: 4, titles: ['floor marker ' + m[2]] });
      if (m[2]) pp.text({ x: m[0], y: m[1], text: m[2], dx: 6, dy: -4, color: '#666' });
    });
    pp.line({ x: x, y: y, color: GREY, width: 0.8 });
    pp.line({ x: x.map(function (v, i) { return sg[i] >= 0 && !inRun[i] ? v : NaN; }), y: y, color: '#9ecae1', width: 1.6 });
    pp.line({ x: x.map(function (v, i) { return inRun[i] ? v : NaN; }), y: y, color: BLUE, width: 2.4 });
    var first = inRun.indexOf(true), last = inRun.lastIndexOf(true);
    if (!S.straight && isFinite(S.centre_x_m) && S.radius_m) {
      var cx = [], cy = [], R = Math.abs(S.radius_m);
      for (var k = 0; k <= 180; k++) { cx.push(S.centre_x_m + R * Math.cos(2 * Math.PI * k / 180)); cy.push(S.centre_y_m + R * Math.sin(2 * Math.PI * k / 180)); }
      pp.line({ x: cx, y: cy, color: '#222', width: 1, dash: '5 4' });
      pp.points({ x: [S.centre_x_m], y: [S.centre_y_m], color: '#222', shape: 'cross', r: 6, titles: ['fitted centre'] });
    }
    if (first >= 0) {
      pp.points({ x: [x[first]], y: [y[first]], color: GREEN, shape: 'triangle', r: 6, titles: ['start of the segment, t = ' + t[first] + ' s'] });
      pp.points({ x: [x[last]], y: [y[last]], color: VERM, shape: 'square', r: 5, titles: ['end of the segment, t = ' + t[last] + ' s'] });
    }
    figure(plots, pp, 'Path on the tank floor (seen from above, counter-clockwise positive).', [
      { kind: 'line', color: BLUE, label: 'this run (segment ' + seg + ')' }, { kind: 'line', color: '#9ecae1', label: 'other segments' },
      { kind: 'line', color: GREY, label: 'left out' }, { kind: 'dash', color: '#222', label: 'fitted circle' },
      { color: GREEN, shape: 'triangle', label: 'start' }, { color: VERM, shape: 'square', label: 'end' }].concat(ol.length ? [{ kind: 'line', color: '#333', label: 'tank outline' }] : []));

    /* heading, yaw rate and speed over time, rows left out shaded */
    var left = spans(t, sg, function (s) { return s < 0; }), mine = spans(t, sg, function (s) { return s === seg; });
    var tl = [t[0], t[t.length - 1]];
    var series = [['h', 'heading (\u00b0, unwrapped)'], ['yr', 'yaw rate (\u00b0/s)'], ['v', 'speed (m/s)']];
    var tfig = document.createElement('div');
    tfig.className = 'timeplots';
    series.forEach(function (sr) {
      var p = new wl.Plot({ w: 600, h: 170, xlabel: sr[0] === 'v' ? 'time (s)' : '', ylabel: sr[1], xlim: tl, label: sr[1] + ' over time' });
      left.forEach(function (s) { p.band({ vertical: true, a: s[0], b: s[1], color: '#888', opacity: 0.25 }); });
      mine.forEach(function (s) { p.band({ vertical: true, a: s[0], b: s[1], color: BLUE, opacity: 0.06 }); });
      p.line({ x: t, y: nums(rb[sr[0]]), color: '#333', width: 1.2 });
      tfig.appendChild(p.svg());
    });
    tfig.insertAdjacentHTML('beforeend', wl.legend([{ kind: 'band', color: '#888', label: 'left out of every segment (start trim, wall, gap, still)' },
      { kind: 'band', color: BLUE, label: 'this run' }]));
    var cap = document.createElement('figcaption');
    cap.textContent = 'Heading, yaw rate and speed of robot ' + run.id + ' over the whole clip.';
    var tf = document.createElement('figure'); tf.appendChild(tfig); tf.appendChild(cap); plots.appendChild(tf);

    /* the yaw spectrum with its fitted peak */
    if (run.spectrum) {
      var sp = run.spectrum, fp = nums(sp.f), pw = nums(sp.p);
      var fmax = Math.min(fp[fp.length - 1], Math.max(sp.f_hi * 1.1, (S.yaw_osc_freq_hz || 0) * 3));
      var ps = new wl.Plot({ w: 560, h: 260, xlabel: 'frequency (Hz)', ylabel: 'power (relative)', xlim: [0, fmax], ylim: [0, 1.08], label: 'yaw spectrum' });
      ps.band({ vertical: true, a: 0, b: sp.f_lo, color: '#888', opacity: 0.2 });
      ps.band({ vertical: true, a: sp.f_hi, b: fmax, color: '#888', opacity: 0.2 });
      ps.line({ x: fp, y: pw, color: '#333', width: 1.2 });
      var pk = isFinite(S.yaw_osc_freq_hz) ? S.yaw_osc_freq_hz : NaN;
      if (isFinite(pk)) ps.vline({ at: pk, color: VERM, width: 1.5, label: fmt.sig(pk, 3) + ' Hz, \u00b1' + fmt.sig(S.yaw_osc_amp_deg, 3) + '\u00b0' +
        (isFinite(S.yaw_osc_r2) ? ' (r\u00b2 ' + fmt.fixed(S.yaw_osc_r2, 2) + ')' : '') });
      figure(plots, ps, 'Spectrum of the heading about the mean path (Hann-windowed periodogram, the measure stage\'s), with the fitted sine\'s frequency.' +
        (isFinite(S.yaw_osc_r2) && S.yaw_osc_r2 < 0.3 ? ' The sine explains little of the variance: there may be no real oscillation.' : ''),
        [{ kind: 'line', color: VERM, label: 'fitted frequency' }, { kind: 'band', color: '#888', label: 'outside the band searched' }]);
    }
    /* the circle's residuals */
    if (run.resid) {
      var rt = nums(run.resid.t), rm = nums(run.resid.mm), rms = 1000 * S.fit_rms_m;
      var pr = new wl.Plot({ w: 560, h: 230, xlabel: 'time (s)', ylabel: 'residual (mm)', label: 'circle residuals' });
      pr.hline({ at: 0, color: '#999' });
      if (isFinite(rms)) { pr.hline({ at: rms, color: ORANGE, dash: '4 3' }); pr.hline({ at: -rms, color: ORANGE, dash: '4 3' }); }
      pr.line({ x: rt, y: rm, color: '#333', width: 1 });
      figure(plots, pr, 'Distance of each position from the fitted ' + (S.straight ? 'line' : 'circle') + ' (left of travel positive; sway included).',
        isFinite(rms) ? [{ kind: 'dash', color: ORANGE, label: '\u00b1 RMS ' + fmt.sig(rms, 2) + ' mm' }] : null);
    }
  });

  /* ---- the clean stage's account ---- */
  var cl = document.getElementById('clean');
  cl.innerHTML = (D.clean || []).length ? '<ul>' + D.clean.map(function (c) {
    var bits = [], o = c.outliers || {};
    if (c.trim && c.trim.at_s !== undefined && c.trim.at_s !== null) bits.push('start trimmed at ' + fmt.sig(c.trim.at_s, 3) + ' s (' + (c.trim.reason || '') + ')');
    if (c.end && c.end.reason) bits.push('track ends: ' + c.end.reason + (c.end.at_s !== null && c.end.at_s !== undefined ? ' at ' + fmt.sig(c.end.at_s, 3) + ' s' : ''));
    if (c.measured !== undefined) bits.push(c.measured + ' rows measured, ' + (c.filled || 0) + ' filled');
    if (o.total !== undefined) bits.push(o.total + ' outlier' + (o.total === 1 ? '' : 's'));
    bits.push(c.gap_count + ' gap' + (c.gap_count === 1 ? '' : 's'));
    if (c.still) bits.push('the robot stood still');
    return '<li>robot ' + esc(c.id) + ': ' + esc(bits.join('; ')) + '</li>';
  }).join('') + '</ul>' : '<p class="note">No clean.csv in this folder.</p>';

  /* ---- messages ---- */
  document.getElementById('log').innerHTML = D.log ? '<div class="msgs">' + esc(D.log.join('\n')) + '</div>' :
    '<p class="note">No process.log (the clip was processed outside a batch, which writes one).</p>';
  /* ---- trail ---- */
  document.getElementById('trail').innerHTML = D.trail ? '<img class="trail" alt="the first frame with each robot\'s path" src="' + D.trail + '">' :
    '<p class="note">No trail.png in this folder.</p>';

  function show() {
    var m = /^#run=(.+)$/.exec(decodeURIComponent(location.hash)), e = m && document.getElementById('run-' + m[1]);
    if (e) e.scrollIntoView();
  }
  show();
  window.addEventListener('hashchange', show);
  document.body.setAttribute('data-ready', '1');
})();
