#!/usr/bin/env bash
# 0402-clean-errors.sh: malformed RAW.csv (missing column, text in a number
# cell, times going backwards, duplicate frame): `wakeline clean` names the
# file and line, exits 1, and writes nothing (an existing output stays as it
# was, no temporary file is left).  Usage errors exit 2.
source "$WL_SOURCE_DIR/tests/e2e/lib/harness.sh"
T="$WL_TEST_TMP"
H="t_s,frame,id,u_px,v_px,x_m,y_m,heading_rad,status,margin,size_px,heading_source"
good() { echo "$1,$2,1,10,10,0.$2,0.2,0.3,ok,50,30,tag"; }

# refused NAME TEXT: clean on NAME.csv exits 1 with TEXT in its message, the
# previous outputs stay as they were and no temporary file is left
refused() {
	local name=$1 want=$2
	echo "previous" > "$T/out.csv"
	echo "previous" > "$T/out.json"
	check_exit "$name: clean fails (exit 1)" 1 "$WAKELINE" clean "$T/$name.csv" -o "$T/out.csv"
	check_grep "$name: the message says '$want'" -F -- "$want" "$T/last.err"
	check_eq "$name: the previous outputs are untouched" "$(cat "$T/out.csv") $(cat "$T/out.json")" "previous previous"
	check_eq "$name: no temporary file is left" "$(ls -A "$T" | grep '\.tmp-' || true)" ""
}

{ echo "t_s,frame,id,x_m,y_m,status"; echo "0,0,1,0,0,ok"; } > "$T/nocol.csv"
refused nocol "nocol.csv:1: the header has no column 'heading_rad'"
{ echo "$H"; good 0.0 0; echo "0.033,1,1,10,10,zero,0.2,0.3,ok,50,30,tag"; } > "$T/text.csv"
refused text "text.csv:3: column 'x_m': 'zero' is not a number"
{ echo "$H"; good 0.0 0; good 0.1 1; good 0.05 2; } > "$T/back.csv"
refused back "back.csv:4: time t_s 0.050000 of robot 1 is not after 0.100000 (line 3)"
{ echo "$H"; good 0.0 0; good 0.1 1; good 0.2 1; } > "$T/dup.csv"
refused dup "dup.csv:4: frame 1 of robot 1 appears twice (also on line 3)"
{ echo "$H"; good 0.0 0; echo "0.1,1,1,10,10,0.1,0.2,0.3,ok,50,30"; echo '0.2,2,1,"10,10,0.1'; } > "$T/quote.csv"
refused quote "quote.csv:4"
rm -f "$T/out.csv" "$T/out.json"
check_exit "a missing input fails (exit 1)" 1 "$WAKELINE" clean "$T/missing.csv" -o "$T/out.csv"
check_grep "a missing input: 'cannot open'" "cannot open" "$T/last.err"
check_no_file "no CLEAN.csv for a missing input" "$T/out.csv"
check_no_file "no sidecar for a missing input" "$T/out.json"

# usage errors
check_exit "no -o is a usage error (exit 2)" 2 "$WAKELINE" clean "$T/dup.csv"
check_exit "a bad --trim is a usage error (exit 2)" 2 "$WAKELINE" clean "$T/dup.csv" -o "$T/o.csv" --trim soon
check_exit "an even --sg-window is a usage error (exit 2)" 2 \
	"$WAKELINE" clean "$T/dup.csv" -o "$T/o.csv" --smoother sg --sg-window 4
check_exit "a bad --tank is a usage error (exit 2)" 2 "$WAKELINE" clean "$T/dup.csv" -o "$T/o.csv" --tank 1,1,0,0
check_exit "clean --help exits 0" 0 "$WAKELINE" clean --help
check_grep "clean --help shows the usage" "usage: wakeline clean" "$T/last.out"
# a CAL.json with a broken outline is an error too
echo '{"format": "wakeline-calibration", "format_version": 1, "tank_outline_m": [[0,0],[1,0]]}' > "$T/cal.json"
{ echo "$H"; good 0.0 0; good 0.1 1; } > "$T/ok.csv"
check_exit "a CAL.json with a two-point outline fails (exit 1)" 1 \
	"$WAKELINE" clean "$T/ok.csv" -o "$T/o.csv" --cal "$T/cal.json"
check_grep "the message names tank_outline_m" "tank_outline_m" "$T/last.err"
check_no_file "no output with a bad outline" "$T/o.csv"
# an output that cannot be written: neither file appears (both are opened
# before either is committed)
check_exit "an unwritable sidecar fails (exit 1)" 1 \
	"$WAKELINE" clean "$T/ok.csv" -o "$T/o.csv" -j "$T/no/such/dir/o.json"
check_grep "the message names o.json" "o.json" "$T/last.err"
check_no_file "CLEAN.csv is not written when the sidecar cannot be" "$T/o.csv"
check_exit "an unwritable output fails (exit 1)" 1 "$WAKELINE" clean "$T/ok.csv" -o "$T/no/such/dir/o.csv"

# edge cases that are not errors: a robot with one detection (too short to
# tell), a robot with only lost rows (nothing to write for it)
{ echo "$H"; good 0.0 0; echo "0.0,0,2,,,,,,lost,,,"; echo "0.1,1,2,,,,,,lost,,,"; } > "$T/edge.csv"
check_exit "clean on the edge cases succeeds" 0 "$WAKELINE" clean "$T/edge.csv" -o "$T/edge_out.csv"
cp "$T/last.out" "$T/edge.txt"
check_grep "robot 1 is too short" "robot 1: too short" "$T/edge.txt"
check_grep "robot 2 has no detections in 2 rows" "robot 2: no detections in 2 rows" "$T/edge.txt"
check_eq "the edge output holds robot 1's one row, cut as a gap" "$(tail -n +2 "$T/edge_out.csv")" \
	"0.000000,0,1,0.000000,0.200000,0.300000,0.000000,0.000000,0.000000,0.000000,-1,measured,gap,0.300000"
done_testing
