#!/usr/bin/env bash
# 0407-clean-measure-yaw.sh: the yaw oscillation's amplitude through clean and
# measure, up to 3 Hz in 15 fps tracks (issue 12: honest intervals).  Twenty
# invented RAW.csv tracks (tests/clean/synth_raw.py, seeds 1-20: radius
# 0.3-2 m either way, 0.1-0.3 m/s, amplitude 5-30 deg at 0.5-3 Hz, 2 mm and
# 2 deg of white noise, 15 fps, 14 s), each cleaned and measured.  The
# smoother attenuates an oscillation near its bandwidth (by a fifth at
# 2.7 Hz before measure fitted the detections' own headings), so: every
# amplitude within 3 % + 3.29 standard errors of the truth, and the 95 %
# interval covers the truth in at least 16 of 20 tracks (a binomial 95 %
# interval over 20 draws holds 16 or more with probability 0.98).
source "$WL_SOURCE_DIR/tests/e2e/lib/harness.sh"
PY=/usr/bin/python3
T="$WL_TEST_TMP"
G="$WL_SOURCE_DIR/tests/clean/synth_raw.py"
$PY - "$T" <<'PYEOF' > "$T/cases.txt"
import sys
import numpy as np
for seed in range(1, 21):
    rng = np.random.default_rng(1000 + seed)
    r = rng.uniform(0.3, 2.0) * rng.choice([-1, 1])
    print(seed, "%.4f %.4f %.3f %.3f" % (r, rng.uniform(0.1, 0.3), rng.uniform(5, 30), rng.uniform(0.5, 3.0)))
PYEOF
while read -r seed radius speed amp freq; do
	$PY "$G" --seed "$seed" --fps 15 --duration 14 --rest 1 --radius "$radius" --speed "$speed" \
		--amp-deg "$amp" --freq "$freq" --out "$T/$seed.raw.csv" --truth "$T/$seed.truth.csv"
	"$WAKELINE" clean "$T/$seed.raw.csv" -o "$T/$seed.clean.csv" -q 2> /dev/null || fail "clean, seed $seed"
	"$WAKELINE" measure "$T/$seed.clean.csv" -o "$T/$seed.summary.json" -q || fail "measure, seed $seed"
done < "$T/cases.txt"
check_py "yaw amplitudes within 3 % + 3.29 SE, the 95 % interval covering in 16 of 20 or more" "$T" <<'PYEOF'
import json, sys
d = sys.argv[1]
cov = n = 0
bad = []
for line in open(d + "/cases.txt"):
    seed, radius, speed, amp, freq = line.split()
    amp, freq = float(amp), float(freq)
    run = [r for r in json.load(open("%s/%s.summary.json" % (d, seed)))["runs"] if r["headline"]][0]
    a, (lo, hi) = run["yaw_osc_amp_deg"], run["yaw_osc_amp_ci95_deg"]
    se = (hi - lo) / (2 * 1.96)
    n += 1
    cov += lo <= amp <= hi
    ok = abs(a - amp) <= 0.03 * amp + 3.29 * se
    print("seed %2s: %.2f Hz, amplitude %.2f deg, measured %.2f deg (%+.1f%%), 95%% [%.2f, %.2f] %s%s" %
          (seed, freq, amp, a, 100 * (a / amp - 1), lo, hi, "covers" if lo <= amp <= hi else "misses",
           "" if ok else "  FAIL"))
    if not ok:
        bad.append(seed)
print("yaw amplitude: 95%% interval covers the truth in %d of %d tracks" % (cov, n))
assert not bad, "amplitude off beyond 3 %% + 3.29 SE: seeds %s" % bad
assert cov >= 16, "coverage %d of %d is under 16" % (cov, n)
PYEOF
done_testing
