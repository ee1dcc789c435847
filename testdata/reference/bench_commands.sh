#!/bin/sh
# Whole-command timing of `tandem compare` against the pandas + scipy
# script on the 10⁶-bin tables of every number style: the two commands
# alternate, and each row gives the medians of the wall time, of the CPU
# time (user + system) and of the peak RSS (GNU time), with the ratios.
#
#   go test ./compare/table -run XXX -bench ReadStyle -benchtime 1x -benchdir /tmp/bench
#   go build -o /tmp/tandem-table ./cmd/tandem
#   sh testdata/reference/bench_commands.sh /tmp/tandem-table /tmp/bench 7
#
# On a shared machine the wall times follow the load (printed before and
# after); the CPU times vary less.
set -eu
tandem=$1 dir=$2 runs=${3:-7}
here=$(dirname "$0")
median() { sort -g | awk '{a[NR]=$1} END {print (NR%2) ? a[(NR+1)/2] : (a[NR/2]+a[NR/2+1])/2}'; }
echo "load before: $(cut -d' ' -f1-3 /proc/loadavg)"
echo "| style | file size | tandem wall | script wall | ratio | tandem CPU | script CPU | ratio | tandem peak RSS | script peak RSS |"
echo "| --- | --- | --- | --- | --- | --- | --- | --- | --- | --- |"
for style in g6 g6_edges17 shortest e18; do
	a=$dir/${style}_1000000_a.csv b=$dir/${style}_1000000_b.csv
	[ -f "$a" ] || { echo "missing $a" >&2; exit 2; }
	t=$(mktemp) p=$(mktemp)
	i=0
	while [ $i -lt "$runs" ]; do
		/usr/bin/time -f "%e %U %S %M" -a -o "$t" "$tandem" compare "$a" "$b" --value rate --error stat --error syst >/dev/null 2>&1 || true
		/usr/bin/time -f "%e %U %S %M" -a -o "$p" /usr/bin/python3 "$here/bench_pandas.py" "$a" "$b" >/dev/null 2>&1
		i=$((i + 1))
	done
	grep -v '^Command' "$t" >"$t.x"; grep -v '^Command' "$p" >"$p.x"
	tw=$(cut -d' ' -f1 "$t.x" | median) pw=$(cut -d' ' -f1 "$p.x" | median)
	tc=$(awk '{print $2+$3}' "$t.x" | median) pc=$(awk '{print $2+$3}' "$p.x" | median)
	tm=$(cut -d' ' -f4 "$t.x" | median) pm=$(cut -d' ' -f4 "$p.x" | median)
	size=$(wc -c <"$a")
	awk -v s="$style" -v size="$size" -v tw="$tw" -v pw="$pw" -v tc="$tc" -v pc="$pc" -v tm="$tm" -v pm="$pm" 'BEGIN {
		printf "| %s | %.0f MB | %.2f s | %.2f s | %.1f× | %.2f s | %.2f s | %.1f× | %.0f MB | %.0f MB |\n",
			s, size/1e6, tw, pw, pw/tw, tc, pc, pc/tc, tm/1024, pm/1024 }'
	rm -f "$t" "$p" "$t.x" "$p.x"
done
echo "load after: $(cut -d' ' -f1-3 /proc/loadavg)"
