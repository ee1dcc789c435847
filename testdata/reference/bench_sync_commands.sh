#!/bin/sh
# Whole-command timing of `tandem sync` against the pandas peer
# (bench_sync_pandas.py) on the benchmark's event tables, sorted and
# shuffled: the commands alternate, and each row gives the medians of the
# wall time, of the CPU time (user + system) and of the peak RSS (GNU time).
#
#   go test ./compare/events -run XXX -bench SyncOrder -benchtime 1x -benchdir /tmp/evbench -benchrows 2000000
#   go build -o /tmp/tandem ./cmd/tandem
#   sh testdata/reference/bench_sync_commands.sh /tmp/tandem /tmp/evbench 2000000 5
#
# On a shared machine the wall times follow the load (printed before and
# after); the CPU times vary less. PANDAS=0 skips the peer.
set -eu
tandem=$1 dir=$2 n=$3 runs=${4:-5}
here=$(dirname "$0")
median() { sort -g | awk '{a[NR]=$1} END {print (NR%2) ? a[(NR+1)/2] : (a[NR/2]+a[NR/2+1])/2}'; }
echo "load before: $(cut -d' ' -f1-3 /proc/loadavg)"
echo "| events | order | command | wall | CPU | peak RSS |"
echo "| --- | --- | --- | --- | --- | --- |"
for order in sorted shuffled; do
	a=$dir/sync_a_${order}_$n.csv b=$dir/sync_b_${order}_$n.csv
	[ -f "$b" ] || { echo "missing $b" >&2; exit 2; }
	t=$(mktemp) p=$(mktemp)
	i=0
	while [ $i -lt "$runs" ]; do
		/usr/bin/time -f "%e %U %S %M" -a -o "$t" "$tandem" sync "$a" "$b" --key run,event --cuts c1,c2 --format json >/dev/null 2>&1 || true
		if [ "${PANDAS:-1}" != 0 ]; then
			/usr/bin/time -f "%e %U %S %M" -a -o "$p" /usr/bin/python3 "$here/bench_sync_pandas.py" "$a" "$b" >/dev/null 2>&1
		fi
		i=$((i + 1))
	done
	for who in tandem pandas; do
		f=$t
		[ $who = pandas ] && f=$p
		grep -v '^Command' "$f" >"$f.x" || true
		[ -s "$f.x" ] || continue
		w=$(cut -d' ' -f1 "$f.x" | median) c=$(awk '{print $2+$3}' "$f.x" | median) m=$(cut -d' ' -f4 "$f.x" | median)
		awk -v n="$n" -v o="$order" -v who="$who" -v w="$w" -v c="$c" -v m="$m" 'BEGIN {
			printf "| %s | %s | %s | %.2f s | %.2f s | %.0f MB |\n", n, o, who, w, c, m/1024 }'
	done
	rm -f "$t" "$p" "$t.x" "$p.x"
done
echo "load after: $(cut -d' ' -f1-3 /proc/loadavg)"
