#!/bin/sh
# Whole-command timing of `tandem compare` (text report to stdout, and the
# JSON report written with -o) against the pandas + scipy script
# bench_pandas.py (asymptotic KS, as an analyst would script it) on the
# 10⁶-bin tables of each number style: the three commands alternate, and
# each row gives the medians of the wall time, of the CPU time (user +
# system) and of the peak RSS (GNU time), with the ratios.
#
#   go test ./compare/table -run XXX -bench ReadStyle -benchtime 1x -benchdir /tmp/bench
#   go build -o /tmp/tandem ./cmd/tandem
#   sh testdata/reference/bench_commands.sh /tmp/tandem /tmp/bench 7 [STYLE…]
#
# STYLE is g6, g6_edges17, shortest or e18 (default: the last three). On a
# shared machine the wall times follow the load (printed before and
# after); the CPU times vary less.
set -eu
tandem=$1 dir=$2 runs=${3:-7}
shift 3 2>/dev/null || shift $#
styles=${*:-g6_edges17 shortest e18}
here=$(dirname "$0")
out=$(mktemp -d)
median() { sort -g | awk '{a[NR]=$1} END {print (NR%2) ? a[(NR+1)/2] : (a[NR/2]+a[NR/2+1])/2}'; }
echo "load before: $(cut -d' ' -f1-3 /proc/loadavg)"
echo "| style | file | wall: text / JSON / script | CPU: text / JSON / script | script ÷ text (wall, CPU) | script ÷ JSON (wall, CPU) | JSON ÷ text (wall, CPU) | peak RSS: text / JSON / script |"
echo "| --- | --- | --- | --- | --- | --- | --- | --- |"
for style in $styles; do
	a=$dir/${style}_1000000_a.csv b=$dir/${style}_1000000_b.csv
	[ -f "$a" ] || { echo "missing $a" >&2; exit 2; }
	t=$out/t j=$out/j p=$out/p
	: >"$t"; : >"$j"; : >"$p"
	i=0
	while [ $i -lt "$runs" ]; do
		/usr/bin/time -f "%e %U %S %M" -a -o "$t" "$tandem" compare "$a" "$b" --value rate --error stat --error syst >/dev/null 2>&1 || true
		/usr/bin/time -f "%e %U %S %M" -a -o "$j" "$tandem" compare "$a" "$b" --value rate --error stat --error syst -o "$out/r.json" >/dev/null 2>&1 || true
		/usr/bin/time -f "%e %U %S %M" -a -o "$p" /usr/bin/python3 "$here/bench_pandas.py" "$a" "$b" >/dev/null 2>&1
		i=$((i + 1))
	done
	for f in "$t" "$j" "$p"; do grep -v '^Command' "$f" >"$f.x"; done
	tw=$(cut -d' ' -f1 "$t.x" | median) jw=$(cut -d' ' -f1 "$j.x" | median) pw=$(cut -d' ' -f1 "$p.x" | median)
	tc=$(awk '{print $2+$3}' "$t.x" | median) jc=$(awk '{print $2+$3}' "$j.x" | median) pc=$(awk '{print $2+$3}' "$p.x" | median)
	tm=$(cut -d' ' -f4 "$t.x" | median) jm=$(cut -d' ' -f4 "$j.x" | median) pm=$(cut -d' ' -f4 "$p.x" | median)
	size=$(wc -c <"$a")
	awk -v s="$style" -v size="$size" -v tw="$tw" -v jw="$jw" -v pw="$pw" -v tc="$tc" -v jc="$jc" -v pc="$pc" -v tm="$tm" -v jm="$jm" -v pm="$pm" 'BEGIN {
		printf "| %s | %.0f MB | %.2f / %.2f / %.2f s | %.2f / %.2f / %.2f s | %.1f×, %.1f× | %.1f×, %.1f× | %.2f×, %.2f× | %.0f / %.0f / %.0f MiB |\n",
			s, size/1e6, tw, jw, pw, tc, jc, pc, pw/tw, pc/tc, pw/jw, pc/jc, jw/tw, jc/tc, tm/1024, jm/1024, pm/1024 }'
done
rm -rf "$out"
echo "load after: $(cut -d' ' -f1-3 /proc/loadavg)"
