/* report_many.js: a large report.html (tests/e2e/lib/report_many.py) in
 * Debian's headless Chromium through playwright-core: times loading and
 * sorting, and checks that the page stays correct and cheap at that size.
 *
 *   node report_many.js REPORT_HTML SUMMARY_CSV OUT_JSON [REPEATS]
 * Environment: WL_PLAYWRIGHT, WL_CHROME.  Prints one line of figures per
 * repeat (one browser, started before the first; each repeat opens the
 * page in a new tab, as a user opens the file in a running browser) and
 * writes the last repeat's checks and figures to OUT_JSON.  Exit 1 when a
 * check fails; the times are reported, not judged (scripts/bench-report
 * states them against the 2 s target). */
'use strict';
const { chromium } = require(process.env.WL_PLAYWRIGHT);
const fs = require('fs'), os = require('os'), path = require('path');
const [report, summaryCsv, outJson, repeatsArg] = process.argv.slice(2);
const repeats = Number(repeatsArg || 1);

function csv(text) { /* summary.csv: no quoted commas in the columns used here */
  const lines = text.trim().split('\n'), head = lines[0].split(',');
  return lines.slice(1).map(l => { const c = l.split(','), o = {}; head.forEach((h, i) => { o[h] = c[i]; }); return o; });
}
async function waitFor(page, fn, arg) {
  const end = Date.now() + 20000;
  while (!(await page.evaluate(fn, arg))) {
    if (Date.now() > end) throw new Error('timed out waiting for ' + fn);
    await new Promise(r => setTimeout(r, 10));
  }
}

async function once(ctx, check) {
  const page = await ctx.newPage(), errors = [], external = [], fails = [], r = {};
  page.on('request', q => { if (!/^(file|data|about):/.test(q.url())) external.push(q.url()); });
  page.on('console', m => { if (m.type() === 'error' || m.type() === 'warning') errors.push(m.text()); });
  page.on('pageerror', e => errors.push(String(e)));
  const c = (ok, msg) => { if (!ok) fails.push(msg); };

  /* load: from the request to the table, groups and plots drawn */
  const t0 = Date.now();
  await page.goto('file://' + path.resolve(report), { waitUntil: 'commit' });
  await waitFor(page, () => document.body && document.body.getAttribute('data-ready') === '1');
  r.load_ms = Date.now() - t0;
  r.nav = await page.evaluate(() => {
    const n = performance.getEntriesByType('navigation')[0];
    return { dom_content_loaded_ms: n.domContentLoadedEventEnd, script_ms: wlReport.timing.ready_ms };
  });
  /* sort: the click handler sorts every run and draws the first page */
  r.sort_ms = await page.evaluate(() => {
    const t = performance.now();
    document.querySelector('#runs th[data-col="curvature"]').click();
    return performance.now() - t;
  });
  r.sort_desc_ms = await page.evaluate(() => {
    const t = performance.now();
    document.querySelector('#runs th[data-col="curvature"]').click();
    return performance.now() - t;
  });
  r.load_and_sort_ms = r.load_ms + r.sort_ms;

  if (check) {
    const rows = csv(fs.readFileSync(summaryCsv, 'utf8')).filter(x => x.status === 'ok' && x.headline === 'true');
    const ks = rows.map(x => Number(x.curvature_per_m)).sort((a, b) => a - b);
    r.runs = rows.length;
    /* the page draws one page of rows, never all of them */
    r.dom_rows = await page.evaluate(() => document.querySelectorAll('#runs tr.run').length);
    r.shown = await page.evaluate(() => document.getElementById('shown').textContent);
    c(r.dom_rows === 100, `the table holds ${r.dom_rows} rows in the DOM, wants one page of 100`);
    c(r.shown === `runs 1\u20131000 of ${rows.length}`.replace('1000', '100'), 'pager says ' + r.shown);
    /* the whole order after sorting, read page by page (1000 rows a page) */
    await page.click('#runs th[data-col="curvature"]'); /* back to increasing */
    await page.selectOption('#pagesize', '1000');
    const all = [];
    for (;;) {
      all.push(...await page.evaluate(() => {
        const D = wlReport.data, j = D.cols.indexOf('curvature_per_m') + 2;
        return Array.from(document.querySelectorAll('#runs tr.run')).map(tr => Number(D.rows[Number(tr.dataset.row)][j]));
      }));
      if (await page.evaluate(() => document.getElementById('next').disabled)) break;
      await page.click('#next');
    }
    c(all.length === ks.length && all.every((v, i) => v === ks[i]), 'sorted pages differ from summary.csv sorted (' + all.length + ' rows)');
    r.sorted_checked = all.length;
    /* filter */
    await page.fill('#filter', 'variant=v2 verdict!=reject');
    await waitFor(page, () => wlReport.state.q === 'variant=v2 verdict!=reject');
    r.filter_text = await page.evaluate(() => document.getElementById('shown').textContent);
    const want = rows.filter(x => x.variant === 'v2' && x.verdict !== 'reject').length;
    c(new RegExp(' of ' + want + ' \\(' + rows.length + ' in all\\)$').test(r.filter_text), `filter shows '${r.filter_text}', wants ${want} runs`);
    r.filtered = want;
    /* groups and the sweep plots over the filtered runs */
    r.groups = await page.evaluate(() => document.querySelectorAll('#groups tr.group').length);
    const gl = new Set(rows.filter(x => x.variant === 'v2' && x.verdict !== 'reject').map(x => x.gain + '/' + x.variant)).size;
    c(r.groups === gl, `${r.groups} groups, wants ${gl}`);
    r.plot_runs = await page.evaluate(() => Array.from(document.querySelectorAll('#sweep-plots svg.plot')[0].querySelectorAll('.runpt path[data-n]')).reduce((a, p) => a + Number(p.dataset.n), 0));
    c(r.plot_runs === want, `${r.plot_runs} run markers in the curvature plot, wants ${want}`);
    c(errors.length === 0, 'console: ' + errors.join(' | '));
    c(external.length === 0, 'requests left the machine: ' + external.join(' '));
  }
  r.fails = fails;
  await page.close();
  return r;
}

(async () => {
  let last;
  const profile = fs.mkdtempSync(path.join(os.tmpdir(), 'wl-chromium-'));
  const ctx = await chromium.launchPersistentContext(profile, {
    executablePath: process.env.WL_CHROME || '/usr/bin/chromium', headless: true, viewport: { width: 1400, height: 1000 },
    args: ['--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run', '--disable-background-networking',
      '--disable-component-update', '--disable-sync']
  });
  for (let i = 0; i < repeats; i++) {
    last = await once(ctx, i === repeats - 1);
    console.log(`load ${last.load_ms} ms (DOMContentLoaded ${last.nav.dom_content_loaded_ms.toFixed(0)} ms, page script ${last.nav.script_ms.toFixed(0)} ms), ` +
      `sort ${last.sort_ms.toFixed(0)} ms, reverse ${last.sort_desc_ms.toFixed(0)} ms, load + sort ${last.load_and_sort_ms.toFixed(0)} ms`);
  }
  await ctx.close();
  fs.rmSync(profile, { recursive: true, force: true });
  fs.writeFileSync(outJson, JSON.stringify(last, null, 1));
  if (last.fails.length) { console.error('FAIL (browser): ' + last.fails.join('\nFAIL (browser): ')); process.exit(1); }
  console.log(`checked: ${last.runs} runs, ${last.dom_rows} rows in the DOM, ${last.sorted_checked} in order, filter ${last.filtered}, ` +
    `${last.groups} groups, ${last.plot_runs} run markers`);
})().catch(e => { console.error('FAIL (browser): ' + (e && e.stack || e)); process.exit(1); });
