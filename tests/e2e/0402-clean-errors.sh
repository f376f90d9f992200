#!/usr/bin/env bash
# 0402-clean-errors.sh: malformed RAW.csv (missing column, text in a number
# cell, times going backwards, duplicate frame): `wakeline clean` names the
# file and line, exits 1, and writes nothing (an existing output stays as it
# was, no temporary file is left).  Usage errors exit 2.
set -euo pipefail
T="$WL_TEST_TMP"; rm -rf "$T"; mkdir -p "$T"
fail() { echo "FAIL: $*" >&2; exit 1; }
H="t_s,frame,id,u_px,v_px,x_m,y_m,heading_rad,status,margin,size_px,heading_source"
good() { echo "$1,$2,1,10,10,0.$2,0.2,0.3,ok,50,30,tag"; }

check() { # name, expected text in the error
	local name=$1 want=$2 rc=0
	echo "previous" > "$T/out.csv"; echo "previous" > "$T/out.json"
	"$WAKELINE" clean "$T/$name.csv" -o "$T/out.csv" 2> "$T/err.txt" > /dev/null || rc=$?
	cat "$T/err.txt"
	[ "$rc" -eq 1 ] || fail "$name: exit $rc, want 1"
	grep -qF "$want" "$T/err.txt" || fail "$name: error lacks '$want'"
	[ "$(cat "$T/out.csv")" = "previous" ] && [ "$(cat "$T/out.json")" = "previous" ] || fail "$name: output touched"
	[ -z "$(ls -A "$T" | grep '\.tmp-' || true)" ] || fail "$name: temporary file left"
}

{ echo "t_s,frame,id,x_m,y_m,status"; echo "0,0,1,0,0,ok"; } > "$T/nocol.csv"
check nocol "nocol.csv:1: the header has no column 'heading_rad'"
{ echo "$H"; good 0.0 0; echo "0.033,1,1,10,10,zero,0.2,0.3,ok,50,30,tag"; } > "$T/text.csv"
check text "text.csv:3: column 'x_m': 'zero' is not a number"
{ echo "$H"; good 0.0 0; good 0.1 1; good 0.05 2; } > "$T/back.csv"
check back "back.csv:4: time t_s 0.050000 of robot 1 is not after 0.100000 (line 3)"
{ echo "$H"; good 0.0 0; good 0.1 1; good 0.2 1; } > "$T/dup.csv"
check dup "dup.csv:4: frame 1 of robot 1 appears twice (also on line 3)"
{ echo "$H"; good 0.0 0; echo "0.1,1,1,10,10,0.1,0.2,0.3,ok,50,30"; echo '0.2,2,1,"10,10,0.1'; } > "$T/quote.csv"
check quote "quote.csv:4"
rm -f "$T/out.csv" "$T/out.json"
"$WAKELINE" clean "$T/missing.csv" -o "$T/out.csv" 2> "$T/err.txt" && fail "missing input accepted"
grep -q "cannot open" "$T/err.txt" || fail "missing input: no message"
[ ! -e "$T/out.csv" ] && [ ! -e "$T/out.json" ] || fail "output written for a missing input"

# usage errors
rc=0; "$WAKELINE" clean "$T/dup.csv" 2>/dev/null || rc=$?; [ "$rc" -eq 2 ] || fail "no -o: exit $rc"
rc=0; "$WAKELINE" clean "$T/dup.csv" -o "$T/o.csv" --trim soon 2>/dev/null || rc=$?; [ "$rc" -eq 2 ] || fail "bad --trim: exit $rc"
rc=0; "$WAKELINE" clean "$T/dup.csv" -o "$T/o.csv" --smoother sg --sg-window 4 2>/dev/null || rc=$?; [ "$rc" -eq 2 ] || fail "even window: exit $rc"
rc=0; "$WAKELINE" clean "$T/dup.csv" -o "$T/o.csv" --tank 1,1,0,0 2>/dev/null || rc=$?; [ "$rc" -eq 2 ] || fail "bad --tank: exit $rc"
"$WAKELINE" clean --help | grep -q "usage: wakeline clean" || fail "--help"
# a CAL.json with a broken outline is an error too
echo '{"format": "wakeline-calibration", "format_version": 1, "tank_outline_m": [[0,0],[1,0]]}' > "$T/cal.json"
{ echo "$H"; good 0.0 0; good 0.1 1; } > "$T/ok.csv"
rc=0; "$WAKELINE" clean "$T/ok.csv" -o "$T/o.csv" --cal "$T/cal.json" 2> "$T/err.txt" || rc=$?
[ "$rc" -eq 1 ] && grep -q "tank_outline_m" "$T/err.txt" || fail "bad outline accepted"
[ ! -e "$T/o.csv" ] || fail "output written with a bad outline"
# an output that cannot be written: neither file appears (both are opened
# before either is committed)
rc=0; "$WAKELINE" clean "$T/ok.csv" -o "$T/o.csv" -j "$T/no/such/dir/o.json" 2> "$T/err.txt" || rc=$?
[ "$rc" -eq 1 ] && grep -q "o.json" "$T/err.txt" || fail "unwritable sidecar: exit $rc"
[ ! -e "$T/o.csv" ] || fail "CLEAN.csv written although the sidecar could not be"
rc=0; "$WAKELINE" clean "$T/ok.csv" -o "$T/no/such/dir/o.csv" 2> "$T/err.txt" || rc=$?
[ "$rc" -eq 1 ] || fail "unwritable output: exit $rc"

# edge cases that are not errors: a robot with one detection (too short to
# tell), a robot with only lost rows (nothing to write for it)
{ echo "$H"; good 0.0 0; echo "0.0,0,2,,,,,,lost,,,"; echo "0.1,1,2,,,,,,lost,,,"; } > "$T/edge.csv"
"$WAKELINE" clean "$T/edge.csv" -o "$T/edge_out.csv" > "$T/edge.txt"
grep -q "robot 1: too short" "$T/edge.txt" && grep -q "robot 2: no detections in 2 rows" "$T/edge.txt" || fail "edge summary"
[ "$(tail -n +2 "$T/edge_out.csv")" = "0.000000,0,1,0.000000,0.200000,0.300000,0.000000,0.000000,0.000000,0.000000,-1,measured,gap,0.300000" ] \
	|| fail "edge output: $(cat "$T/edge_out.csv")"
echo "0402-clean-errors: ok"
