/* report_check.js: drives Debian's headless Chromium through playwright-core
 * over a batch's report.html and one run page, as a user would: sorts,
 * filters, switches columns, opens a run page.  Checks in the browser what
 * only the browser can tell (no console error, no request leaving the
 * machine, the JS rounding port against the shared worked examples) and
 * writes what the page computed (group statistics, t quantiles, filter
 * counts) to OUT/browser.json for the calling test to hold against Python.
 *
 *   node report_check.js REPORT_HTML OUTDIR EXAMPLES_CSV RUN_CLIP
 *     RUN_CLIP: the clip (as in summary.csv) whose run page is opened
 * Environment: WL_PLAYWRIGHT (the playwright-core folder), WL_CHROME.
 * Screenshots: OUT/report.png, OUT/table.png, OUT/groups.png, OUT/sweep.png,
 * OUT/run.png.  Exit 1 with the failures listed, 0 when all held. */
'use strict';
const { chromium } = require(process.env.WL_PLAYWRIGHT);
const fs = require('fs'), os = require('os'), path = require('path');
const [report, out, examplesCsv, runClip] = process.argv.slice(2);
const fails = [], res = {};
function check(cond, msg) { if (!cond) fails.push(msg); }

/* polls fn(arg) in the page until it is true (page.waitForFunction compiles
 * its predicate with eval, which the page's security policy forbids) */
async function waitFor(page, fn, arg, ms) {
  const end = Date.now() + (ms || 10000);
  for (;;) {
    if (await page.evaluate(fn, arg)) return;
    if (Date.now() > end) throw new Error('timed out waiting for ' + fn);
    await new Promise(r => setTimeout(r, 25));
  }
}

function csvRows(text) { /* the examples file: '#' comments, quoted last column */
  return text.split('\n').filter(l => l && !l.startsWith('#')).slice(1).map(l => {
    const m = /^([^,]*),([^,]*),([^,]*),([^,]*),/.exec(l + ',');
    return { fn: m[1], v: Number(m[2]), arg: m[3] === '' ? NaN : Number(m[3]), want: m[4] };
  });
}

(async () => {
  const profile = fs.mkdtempSync(path.join(os.tmpdir(), 'wl-chromium-'));
  const ctx = await chromium.launchPersistentContext(profile, {
    executablePath: process.env.WL_CHROME || '/usr/bin/chromium', headless: true,
    viewport: { width: 1400, height: 1000 },
    args: ['--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run', '--disable-background-networking',
      '--disable-component-update', '--disable-sync']
  });
  const errors = [], external = [], failed = [];
  ctx.on('request', r => { const u = r.url(); if (!/^(file|data|about):/.test(u)) external.push(u); });
  ctx.on('requestfailed', r => failed.push(r.url() + ' ' + (r.failure() || {}).errorText));
  const page = await ctx.newPage();
  page.on('console', m => { if (m.type() === 'error' || m.type() === 'warning') errors.push(m.type() + ': ' + m.text()); });
  page.on('pageerror', e => errors.push('pageerror: ' + e));

  const t0 = Date.now();
  await page.goto('file://' + path.resolve(report));
  await page.waitForSelector('body[data-ready="1"]', { timeout: 20000 });
  res.load_ms = Date.now() - t0;
  res.ready_ms = await page.evaluate(() => wlReport.timing.ready_ms);
  await waitFor(page, () => document.body.hasAttribute('data-images-total'));
  await page.screenshot({ path: path.join(out, 'report.png'), fullPage: true });
  await page.locator('#runs').screenshot({ path: path.join(out, 'table.png') });
  await page.locator('#groups').screenshot({ path: path.join(out, 'groups.png') });
  await page.locator('#sweep-plots').screenshot({ path: path.join(out, 'sweep.png') });

  /* the JavaScript port of the rounding rule, against every worked example */
  const ex = csvRows(fs.readFileSync(examplesCsv, 'utf8'));
  const got = await page.evaluate(ex => ex.map(e => {
    const f = wlReport.fmt, a = e.arg === null ? NaN : e.arg;
    return e.fn === 'pm' ? f.pm(e.v, a) : e.fn === 'value' ? f.value(e.v, a) : e.fn === 'sig' ? f.sig(e.v, a) : f.fixed(e.v, a);
  }), ex.map(e => ({ fn: e.fn, v: e.v, arg: isNaN(e.arg) ? null : e.arg })));
  ex.forEach((e, i) => check(got[i] === e.want, `numfmt example ${e.fn}(${e.v}, ${e.arg}): JS gave '${got[i]}', wants '${e.want}'`));
  res.examples = ex.length;
  /* the C-formatted interval texts and the JS port agree on every run */
  res.c_js_mismatch = await page.evaluate(() => {
    const D = wlReport.data, C = {}, bad = [];
    D.cols.forEach((c, i) => { C[c] = i + 2; });
    D.rows.forEach(r => {
      const k = Number(r[C.curvature_per_m]), lo = Number(r[C.curvature_ci95_per_m_lo]), hi = Number(r[C.curvature_ci95_per_m_hi]);
      const js = wlReport.fmt.pm(k, 0.5 * (hi - lo)), c = r[D.cols.length + 2];
      if (js !== c) bad.push(r[0] + ': C ' + c + ', JS ' + js);
    });
    return bad;
  });
  check(res.c_js_mismatch.length === 0, 'C and JS format intervals differently: ' + res.c_js_mismatch.slice(0, 3).join('; '));

  /* t quantiles, for the caller to hold against scipy */
  res.t975 = await page.evaluate(() => [1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 15, 20, 29, 30, 40, 60, 120, 1000].map(df => [df, wlReport.tq975(df)]));

  /* the group table as the page computed it */
  res.groups = await page.evaluate(() => Array.from(document.querySelectorAll('#groups tr.group')).map(tr => {
    const tds = Array.from(tr.children), keys = [], cells = {};
    for (const td of tds) { if (td.classList.contains('gm')) break; keys.push(td.textContent); }
    tr.querySelectorAll('td.gm').forEach(td => {
      cells[td.dataset.key] = { n: Number(td.dataset.n), mean: Number(td.dataset.mean), sd: Number(td.dataset.sd),
        half: Number(td.dataset.half), text: td.textContent };
    });
    return { keys: keys.slice(0, -1), n: Number(keys[keys.length - 1]), cells };
  }));
  res.group_cols = await page.evaluate(() => wlReport.state.group);

  /* sorting by a column reorders the rows: curvature up, then down */
  async function column(key) {
    return page.evaluate(key => {
      const D = wlReport.data, j = D.cols.indexOf(key) + 2;
      return Array.from(document.querySelectorAll('#runs tr.run')).map(tr => D.rows[Number(tr.dataset.row)][j]);
    }, key);
  }
  const before = await column('curvature_per_m');
  await page.click('#runs th[data-col="curvature"]');
  const up = (await column('curvature_per_m')).map(Number);
  await page.click('#runs th[data-col="curvature"]');
  const down = (await column('curvature_per_m')).map(Number);
  const sorted = a => a.every((v, i) => i === 0 || a[i - 1] <= v);
  check(up.length > 2 && sorted(up), 'sorting by curvature did not give increasing values: ' + up.join(' '));
  check(sorted(down.slice().reverse()), 'the second click did not reverse the order: ' + down.join(' '));
  check(JSON.stringify(before.map(Number)) !== JSON.stringify(up), 'the rows were in curvature order already: the sort check proves nothing');
  res.sorted_rows = up.length;
  res.sort_hash = await page.evaluate(() => location.hash);
  /* a text column */
  await page.click('#runs th[data-col="variant"]');
  const vs = await column('variant');
  check(vs.every((v, i) => i === 0 || vs[i - 1] <= v), 'sorting by variant did not group the variants: ' + vs.join(' '));

  /* the filter hides rows */
  async function filtered(q) {
    await page.fill('#filter', q);
    await waitFor(page, q => wlReport.state.q === q, q);
    return page.evaluate(() => ({
      shown: document.querySelectorAll('#runs tr.run').length,
      text: document.getElementById('shown').textContent,
      rows: Array.from(document.querySelectorAll('#runs tr.run')).map(tr => wlReport.data.rows[Number(tr.dataset.row)])
    }));
  }
  const col = async k => page.evaluate(k => wlReport.data.cols.indexOf(k) + 2, k);
  const cv = await col('variant'), ck = await col('curvature_per_m');
  let f = await filtered('variant=fin');
  check(f.rows.every(r => r[cv] === 'fin'), 'variant=fin left other variants');
  res.filter_fin = f.shown;
  f = await filtered('curvature>1');
  check(f.rows.every(r => Number(r[ck]) > 1), 'curvature>1 left smaller curvatures');
  res.filter_k1 = f.shown;
  f = await filtered('g2_');
  check(f.rows.every(r => r[0].includes('g2_')), 'the text filter left other clips');
  res.filter_g2 = f.shown;
  f = await filtered('nosuchclip');
  check(f.shown === 0 && /no run matches/.test(f.text), 'a filter matching nothing still shows rows');
  await filtered('');

  /* verdicts: coloured, the reasons on hover */
  res.verdicts = await page.evaluate(() => Array.from(document.querySelectorAll('#runs .verdict')).map(e => [e.className, e.title]));
  check(res.verdicts.some(v => /v-check/.test(v[0]) && /22% of rows rejected as outliers/.test(v[1])), 'no "check" verdict showing its reasons');
  check(res.verdicts.some(v => /v-reject/.test(v[0])), 'no "reject" verdict shown');

  /* every column one click away, thumbnails load, back to compact */
  await page.click('summary');
  await page.click('#view-all');
  res.all_columns = await page.evaluate(() => document.querySelectorAll('#runs th').length);
  res.compact_columns = await page.evaluate(() => wlReport.defs.length);
  check(res.all_columns === res.compact_columns, `"all columns" shows ${res.all_columns} of ${res.compact_columns}`);
  await waitFor(page, () => Array.from(document.querySelectorAll('img.thumb')).every(i => i.complete));
  res.thumbs = await page.evaluate(() => { const im = Array.from(document.querySelectorAll('img.thumb')); return [im.length, im.filter(i => i.naturalWidth > 0).length]; });
  check(res.thumbs[0] > 0 && res.thumbs[0] === res.thumbs[1], `thumbnails: ${res.thumbs[1]} of ${res.thumbs[0]} loaded`);
  await page.screenshot({ path: path.join(out, 'all-columns.png') });
  await page.click('#view-compact');

  /* sweep plots: one marker per run, round decades on the radius axis */
  res.sweep = await page.evaluate(() => {
    const svgs = document.querySelectorAll('#sweep-plots svg.plot');
    return { plots: svgs.length, runs_k: svgs[0] ? Array.from(svgs[0].querySelectorAll('.runpt path[data-n]')).reduce((a, p) => a + Number(p.dataset.n), 0) : 0,
      means_k: svgs[0] ? svgs[0].querySelectorAll('.meanpt title').length : 0,
      radius_ticks: svgs[1] ? Array.from(svgs[1].querySelectorAll('text.ytick')).map(t => t.textContent).filter(t => t !== '') : [] };
  });
  await page.selectOption('#sweep-x', 'replicate');
  await page.selectOption('#sweep-by', '');
  res.sweep_replicate = await page.evaluate(() => document.querySelectorAll('#sweep-plots svg.plot').length);

  /* the run page, through the table's link */
  await filtered(runClip);
  await Promise.all([page.waitForNavigation(), page.click('#runs tr.run td a')]);
  await page.waitForSelector('body[data-ready="1"]', { timeout: 20000 });
  res.run_url = page.url();
  await page.screenshot({ path: path.join(out, 'run.png'), fullPage: true });
  res.run = await page.evaluate(() => ({
    title: document.querySelector('h1').textContent,
    sections: document.querySelectorAll('section.run').length,
    plots: document.querySelectorAll('section.run svg.plot').length,
    spectrum_peak: (document.querySelector('section.run svg[role=img] title') || {}).textContent,
    numbers: Array.from(document.querySelectorAll('table.numbers tr')).map(tr => Array.from(tr.children).map(td => td.textContent)),
    budget: Array.from(document.querySelectorAll('table.budget tr')).map(tr => Array.from(tr.children).map(td => td.textContent)),
    verdict: (document.querySelector('section.run .verdict') || {}).textContent,
    trail: (() => { const i = document.querySelector('img.trail'); return i ? [i.complete, i.naturalWidth] : null; })(),
    log: (document.querySelector('#log .msgs') || {}).textContent || '',
    clean: document.getElementById('clean').textContent,
    params: document.getElementById('head').textContent
  }));

  res.console = errors;
  res.external_requests = external;
  res.failed_requests = failed;
  check(errors.length === 0, 'console: ' + errors.join(' | '));
  check(external.length === 0, 'requests left the machine: ' + external.join(' '));
  check(failed.length === 0, 'requests failed: ' + failed.join(' '));
  await ctx.close();
  fs.rmSync(profile, { recursive: true, force: true });
  fs.writeFileSync(path.join(out, 'browser.json'), JSON.stringify(res, null, 1));
  if (fails.length) { console.error('FAIL (browser): ' + fails.join('\nFAIL (browser): ')); process.exit(1); }
  console.log(`browser: report ready in ${res.load_ms} ms (script ${res.ready_ms.toFixed(0)} ms), ${res.examples} rounding examples, ` +
    `sorted ${res.sorted_rows} rows, filters ${res.filter_fin}/${res.filter_k1}/${res.filter_g2} rows, run page ${res.run.plots} plots`);
})().catch(e => { console.error('FAIL (browser): ' + (e && e.stack || e)); process.exit(1); });
