#!/bin/sh
# Whole-command timing of `tandem compare` against the pandas + scipy
# script on the 10⁶-bin tables of every number style, alternating the two
# commands, with the median wall time and peak RSS of each (GNU time).
#
#   go test ./compare/table -run XXX -bench ReadStyle -benchtime 1x -benchdir /tmp/bench
#   go build -o /tmp/tandem-table ./cmd/tandem
#   sh testdata/reference/bench_commands.sh /tmp/tandem-table /tmp/bench 7
#
# Prints one Markdown row per style: file size, medians, ratio, peak RSS.
set -eu
tandem=$1 dir=$2 runs=${3:-7}
here=$(dirname "$0")
median() { sort -g | awk '{a[NR]=$1} END {print (NR%2) ? a[(NR+1)/2] : (a[NR/2]+a[NR/2+1])/2}'; }
echo "| style | file size | tandem | script | ratio | tandem peak RSS | script peak RSS |"
echo "| --- | --- | --- | --- | --- | --- | --- |"
for style in g6 g6_edges17 shortest e18; do
	a=$dir/${style}_1000000_a.csv b=$dir/${style}_1000000_b.csv
	[ -f "$a" ] || { echo "missing $a" >&2; exit 2; }
	: >/tmp/bench_t.$$ ; : >/tmp/bench_p.$$
	i=0
	while [ $i -lt "$runs" ]; do
		/usr/bin/time -f "%e %M" -a -o /tmp/bench_t.$$ "$tandem" compare "$a" "$b" --value rate --error stat --error syst >/dev/null 2>&1 || true
		/usr/bin/time -f "%e %M" -a -o /tmp/bench_p.$$ /usr/bin/python3 "$here/bench_pandas.py" "$a" "$b" >/dev/null 2>&1
		i=$((i + 1))
	done
	tt=$(cut -d' ' -f1 /tmp/bench_t.$$ | median) pt=$(cut -d' ' -f1 /tmp/bench_p.$$ | median)
	tm=$(cut -d' ' -f2 /tmp/bench_t.$$ | median) pm=$(cut -d' ' -f2 /tmp/bench_p.$$ | median)
	size=$(wc -c <"$a")
	awk -v s="$style" -v size="$size" -v tt="$tt" -v pt="$pt" -v tm="$tm" -v pm="$pm" 'BEGIN {
		printf "| %s | %.0f MB | %.3f s | %.3f s | %.1f× | %.0f MB | %.0f MB |\n", s, size/1e6, tt, pt, pt/tt, tm/1024, pm/1024 }'
done
rm -f /tmp/bench_t.$$ /tmp/bench_p.$$
