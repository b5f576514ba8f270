#!/bin/sh
# Reference for BenchmarkImportCommand200k (app/cli): the sqlite3 tool
# loads the same 200,000 label rows into the labels table of a fresh copy
# of the same prepared project (same tables, indexes and triggers), in one
# transaction: BEGIN, the annotator row, .import --csv, COMMIT, and the
# close that checkpoints the log, as our command's close does. It runs
# with the synchronous level our connections use (NORMAL, in WAL mode).
# The tool's foreign-key enforcement stays as it comes (off): it stores
# the empty suggestion_id field as '' rather than NULL, which enforcement
# would refuse; our import does check its foreign keys.
#
#   compare_import.sh --runs K [--threads N] DIR
#
# DIR is the BENCH_DATA folder the benchmark filled (project.boxw,
# prelude.sql, rows.csv). One untimed warm-up, then K timed runs, each
# printing "seconds X" (process start to exit). --threads is accepted for
# the harness; sqlite3 loads rows on one thread whatever it says.
# Debian package: sqlite3.
set -eu

runs=5
threads=1
while [ $# -gt 1 ]; do
	case "$1" in
	--runs) runs=$2; shift 2 ;;
	--threads) threads=$2; shift 2 ;;
	*) echo "compare_import.sh: unknown argument $1" >&2; exit 2 ;;
	esac
done
[ $# -eq 1 ] || { echo "usage: compare_import.sh --runs K [--threads N] DIR" >&2; exit 2; }
dir=$1
command -v sqlite3 >/dev/null 2>&1 || { echo "compare_import.sh: the sqlite3 tool is missing (Debian package sqlite3)" >&2; exit 1; }
for f in project.boxw prelude.sql rows.csv; do
	[ -f "$dir/$f" ] || { echo "compare_import.sh: $dir/$f is missing; run the benchmark with BENCH_DATA=$dir first" >&2; exit 1; }
done
want=$(wc -l <"$dir/rows.csv")
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
cat >"$work/load.sql" <<EOF
.bail on
PRAGMA synchronous=NORMAL;
PRAGMA threads=$threads;
BEGIN IMMEDIATE;
.read $dir/prelude.sql
.import --csv $dir/rows.csv labels
COMMIT;
EOF

i=0
while [ "$i" -le "$runs" ]; do
	rm -f "$work/p.boxw" "$work/p.boxw-wal" "$work/p.boxw-shm"
	cp "$dir/project.boxw" "$work/p.boxw"
	sync "$work/p.boxw" 2>/dev/null || true
	t0=$(date +%s.%N)
	sqlite3 "$work/p.boxw" <"$work/load.sql" >"$work/out" 2>&1 || { cat "$work/out" >&2; exit 1; }
	t1=$(date +%s.%N)
	got=$(sqlite3 "$work/p.boxw" "SELECT count(*) FROM labels")
	[ "$got" -eq "$want" ] || { echo "compare_import.sh: $got rows stored, want $want" >&2; cat "$work/out" >&2; exit 1; }
	if [ "$i" -gt 0 ]; then
		echo "$t0 $t1" | awk '{ printf "seconds %.6f\n", $2 - $1 }'
	fi
	i=$((i + 1))
done
