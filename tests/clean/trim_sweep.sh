#!/usr/bin/env bash
# trim_sweep.sh [SEEDS]: prints the auto-trim error (trim time minus the true
# 98 % settling time) of `wakeline clean` on invented synthetic runs over many
# seeds: constant rate, variable rate, a slower speed-up, a 1 s occlusion
# after the settling and a late start (5 s of rest).  Prints figures,
# asserts nothing (the e2e test 0401 holds fixed seeds to one period).
set -euo pipefail
n=${1:-6}
here=$(cd "$(dirname "$0")" && pwd)
wl=${WAKELINE:-$here/../../build/wakeline}
tmp=$(mktemp -d); trap 'rm -rf "$tmp"' EXIT
for kind in "cfr:" "vfr:--vfr" "tau0.8:--tau 0.8" "gap:--gap 4,1.0" "late:--rest 5 --duration 14"; do
	name=${kind%%:*}; args=${kind#*:}
	errs=""
	for s in $(seq 1 "$n"); do
		settle=$(/usr/bin/python3 "$here/synth_raw.py" --seed $((100 + s)) $args --out "$tmp/r.csv" \
			--truth "$tmp/t.csv" | awk '/settle_s/{print $2}')
		"$wl" clean -q "$tmp/r.csv" -o "$tmp/c.csv"
		e=$(/usr/bin/python3 -c "import json; r=json.load(open('$tmp/c.json'))['robots'][0]; print('%.3f' % (r['trim']['t_s'] - $settle))")
		errs="$errs $e"
	done
	/usr/bin/python3 -c "
import sys; e=[float(v) for v in sys.argv[2:]]
print('%-7s trim error (s): max |e| %.3f, mean %.3f, all:%s' % (sys.argv[1], max(abs(v) for v in e), sum(e)/len(e), ' '.join(sys.argv[2:])))" "$name" $errs
done
