#!/usr/bin/env bash
# report.html of a sweep with replicates, in headless Chromium.  An invented
# sweep (tests/e2e/lib/report_sweep.py: gain 0, 0.5, 1, 2 x two variants x
# three replicates, 24 clip folders whose summaries the real `measure` made
# from synthetic tracks; verdicts and one uncertainty budget written in as
# the measure stage's later version will) is merged, then Debian's chromium,
# driven by playwright-core (tests/e2e/lib/report_check.js), loads the page
# as a user would.  Checks:
#   - no console error or warning, no request leaving the machine, every
#     thumbnail loads;
#   - the group table's means, standard deviations and 95% intervals equal
#     a reference computed here from summary.csv with Python's `statistics`
#     module and scipy.stats.t (Debian python3-scipy), and the page's t
#     quantiles equal scipy's;
#   - sorting by curvature orders the rows (up, then down), the filter hides
#     rows (counts checked against summary.csv), "all columns" shows every
#     column, verdicts show their reasons on hover;
#   - the JS port of the rounding rule gives every worked example of
#     tests/data/numfmt-examples.csv, and the same strings as the C function
#     on every run;
#   - the radius axis has round decade ticks; the run page opened from the
#     table shows the clip's parameters, numbers, verdict, budget, plots,
#     messages and the trail image;
#   - summary.csv keeps verdict_reasons joined with "; ".
# Screenshots (report.png, table.png, groups.png, sweep.png, run.png) stay in
# the test's folder.  Skipped (77) when npm cannot fetch the driver.
source "$WL_SOURCE_DIR/tests/e2e/lib/harness.sh"
: "${WL_BUILD_DIR:?}"
. "$WL_SOURCE_DIR/tests/e2e/lib/browser.bash"
wl_browser_setup

$PY "$WL_SOURCE_DIR/tests/e2e/lib/report_sweep.py" "$WAKELINE" out --verdicts > sweep.txt || fail "report_sweep.py"
# the first clip gets a process.log and a trail image, as a batch would write
c=out/clips/g0_round_r1_mp4
printf 'wakeline process clips/g0_round_r1.mp4\nwakeline clean: warning: robot 1: 3 rows rejected as outliers\n' > $c/process.log
"$WAKELINE" merge out > merge.txt || fail "merge: $(cat merge.txt)"
cp $c/path_m.png $c/trail.png
rm $c/run.html
"$WAKELINE" merge out > merge.txt || fail "merge: $(cat merge.txt)"
check_grep "merge: 24 runs from 24 clip folders, none failed or missing" "24 runs from 24 clip folders, 0 failed, 0 missing" merge.txt

check "in Chromium: no console error, no outside request, every part of the page there" \
	node "$WL_SOURCE_DIR/tests/e2e/lib/report_check.js" out/report.html . \
	"$WL_SOURCE_DIR/tests/data/numfmt-examples.csv" g0_round_r1.mp4

check_py "the page's groups, sorting, filter, plots and run page against summary.csv and Python's statistics" <<'PYEOF'
import csv, json, math, statistics
from scipy import stats
b = json.load(open("browser.json"))
rows = [r for r in csv.DictReader(open("out/summary.csv")) if r["status"] == "ok" and r["headline"] == "true"]
assert len(rows) == 24, len(rows)

# summary.csv: verdict_reasons as one cell joined with "; " (contracts.md)
assert any(r["verdict_reasons"] == "22% of rows rejected as outliers; camera moved at 4.2 s" for r in rows)

# t quantiles against scipy.stats.t (Debian python3-scipy): the page's value
# has two-sided probability 0.95 under scipy's CDF to 1e-12, and is within
# 1e-7 of scipy's ppf (which is itself off by up to ~4e-9 near df 40)
for df, t in b["t975"]:
    assert abs(2 * stats.t.cdf(t, df) - 1 - 0.95) < 1e-12, (df, t)
    assert abs(t - stats.t.ppf(0.975, df)) < 1e-7, (df, t)

# groups: the page's default grouping is the batch's x and variant columns
assert b["group_cols"] == ["gain", "variant"], b["group_cols"]
groups = {}
for r in rows:
    groups.setdefault((r["gain"], r["variant"]), []).append(r)
assert len(b["groups"]) == len(groups) == 8, (len(b["groups"]), len(groups))
checked = 0
for g in b["groups"]:
    members = groups[tuple(g["keys"])]
    assert g["n"] == len(members) == 3, g
    for key in ("curvature_per_m", "straightness", "mean_speed_mps", "yaw_osc_freq_hz", "yaw_osc_amp_deg",
                "tracked_fraction"):
        vals = [float(r[key]) for r in members if r[key] != ""]
        c = g["cells"][key]
        mean, sd = statistics.mean(vals), statistics.stdev(vals)
        half = stats.t.ppf(0.975, len(vals) - 1) * sd / math.sqrt(len(vals))
        tol = lambda ref: 1e-9 * max(abs(ref), 1e-12)
        assert c["n"] == len(vals), (key, c)
        assert abs(c["mean"] - mean) <= tol(mean), (g["keys"], key, c["mean"], mean)
        assert abs(c["sd"] - sd) <= tol(sd) + 1e-15, (g["keys"], key, c["sd"], sd)
        assert abs(c["half"] - half) <= tol(half) + 1e-15, (g["keys"], key, c["half"], half)
        # the text: the mean within half a unit of its last shown digit
        text = c["text"].split(" ")[0]
        if "±" in c["text"] and not text.startswith("("):
            dec = len(text.split(".")[1]) if "." in text else 0
            assert abs(float(text) - mean) <= 0.5 * 10 ** -dec + 1e-12, (key, c["text"], mean)
        checked += 1
print("groups: %d means, standard deviations and intervals equal statistics/scipy to 1e-9" % checked)

# filters: as many rows as summary.csv has
assert b["filter_fin"] == sum(r["variant"] == "fin" for r in rows), b["filter_fin"]
assert b["filter_k1"] == sum(float(r["curvature_per_m"]) > 1 for r in rows), b["filter_k1"]
assert b["filter_g2"] == sum("g2_" in r["clip"] for r in rows), b["filter_g2"]
assert b["sorted_rows"] == 24

# sweep plots: one marker per run, one mean per gain and variant; round decade ticks
s = b["sweep"]
assert s["plots"] == 2 and s["runs_k"] == 24 and s["means_k"] == 8, s
for t in s["radius_ticks"]:
    v = abs(float(t))
    assert v == 0 or abs(math.log10(v) - round(math.log10(v))) < 1e-12, s["radius_ticks"]
assert b["sweep_replicate"] == 2

# the run page
r = b["run"]
assert r["title"] == "g0_round_r1.mp4" and "#run=1.0" in b["run_url"], (r["title"], b["run_url"])
assert "gain" in r["params"] and "round" in r["params"], r["params"]
assert r["sections"] == 1 and r["plots"] == 6, r
nums = {row[0]: row[1] for row in r["numbers"][1:]}
assert nums["radius (m), + counter-clockwise"] == "straight", nums
assert "±" in nums["curvature (1/m)"] and "±" in nums["mean speed (m/s)"], nums   # the budget's interval
assert any(row[1] == "calibration" for row in r["budget"]), r["budget"]
assert r["trail"] and r["trail"][0] and r["trail"][1] > 0, r["trail"]
assert "3 rows rejected as outliers" in r["log"], r["log"]
print("run page: %d plots, budget of %d rows, trail %d px wide" % (r["plots"], len(r["budget"]), r["trail"][1]))
PYEOF
for f in report.png table.png groups.png sweep.png run.png; do
	check_eq "$f is a PNG screenshot" "$(head -c 8 "$f" | od -An -c | tr -d ' ')" '211PNG\r\n032\n'
done
note "screenshots: $(ls "$WL_TEST_TMP"/*.png | tr '\n' ' ')"
done_testing
