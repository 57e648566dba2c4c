#!/usr/bin/env bash
# City-scale benchmark: Streetwood against bare SQLite at 10k, 100k and 1M generated trees, as ratios
# measured in the same run, plus the TUI per keystroke, a removal study and peak memory. Prints one table.
#
#   benches/run.sh                    # all sizes (the 1M import alone takes about a minute)
#   SIZES="10000 100000" benches/run.sh
#
# Needs the sqlite3 shell (Debian package sqlite3; installed here if missing and we are root).
set -euo pipefail
cd "$(dirname "$0")/.."
SIZES=${SIZES:-"10000 100000 1000000"}
WORK=${WORK:-target/bench-run}
mkdir -p "$WORK"

if ! command -v sqlite3 >/dev/null; then
    if [ "$(id -u)" = 0 ]; then
        apt-get update -qq && apt-get install -y -qq sqlite3 >/dev/null
    else
        echo "the sqlite3 shell is needed: apt-get install sqlite3" >&2
        exit 1
    fi
fi
cargo build --release --quiet
SW=target/release/streetwood

# measure OUT_FILE CMD... → prints "seconds max_rss_kb" of the command (stdout to OUT_FILE)
measure() {
    local out=$1
    shift
    /usr/bin/time -f "%e %M" -o "$WORK/time.txt" "$@" >"$out" 2>"$WORK/stderr.txt" || {
        cat "$WORK/stderr.txt" >&2
        return 1
    }
    cat "$WORK/time.txt"
}
ratio() { awk -v a="$1" -v b="$2" 'BEGIN { if (b <= 0) b = 0.001; printf "%.2f", a / b }'; }
mb() { awk -v k="$1" 'BEGIN { printf "%.0f", k / 1024 }'; }

BARE_SELECT="SELECT t.id, t.uid, s.scientific_name, t.site_kind, m.measured_on, m.stems_cm, m.dbh_cm, m.height_m,
 m.crown_width_m, m.crown_width2_m, m.crown_base_m, m.dieback_pct, m.condition
 FROM trees t JOIN species s ON s.id = t.species_id JOIN measurements m ON m.tree_id = t.id
 WHERE t.status = 'standing' ORDER BY t.id, m.measured_on"

rows=()
for n in $SIZES; do
    csv="$WORK/trees-$n.csv"
    [ -f "$csv" ] || $SW gen --trees "$n" --seed 1 --out "$csv" --weather-out "$WORK/weather.csv" 2>/dev/null
    db="$WORK/inv-$n.db"
    rm -f "$db" "$db-wal" "$db-shm" "$WORK/bare-$n.db"
    $SW init "$db" 2>/dev/null
    read -r t_import rss_import < <(measure /dev/null $SW --db "$db" import trees "$csv")
    read -r t_bare_import _ < <(measure /dev/null sqlite3 "$WORK/bare-$n.db" -cmd ".mode csv" ".import $csv trees")
    $SW --db "$db" import weather "$WORK/weather.csv" --station Bench --lat 42.7 --elevation 260 2>/dev/null
    read -r t_benefits rss_benefits < <(measure /dev/null $SW --db "$db" benefits --format csv)
    read -r t_bare_scan _ < <(measure /dev/null sqlite3 -csv "$db" "$BARE_SELECT")
    read -r t_summary rss_summary < <(measure /dev/null $SW --db "$db" summary --by species --format csv)
    rows+=("$(printf '%-9s %8s %8s %7s× %9s %8s %7s× %8s %7s× %7s %7s %7s' "$n" \
        "$t_import" "$t_bare_import" "$(ratio "$t_import" "$t_bare_import")" \
        "$t_benefits" "$t_bare_scan" "$(ratio "$t_benefits" "$t_bare_scan")" \
        "$t_summary" "$(ratio "$t_summary" "$t_bare_scan")" \
        "$(mb "$rss_import")" "$(mb "$rss_benefits")" "$(mb "$rss_summary")")")
done

# A removal study of 10,000 trees × 1,000 Monte Carlo runs × 40 years (on the largest inventory ≥ 10k).
study_line="(no inventory of 10,000 trees or more)"
for n in $SIZES; do
    if [ "$n" -ge 10000 ]; then study_db="$WORK/inv-$n.db"; fi
done
if [ -n "${study_db:-}" ]; then
    ids=$(seq -s, 1 10000)
    $SW --db "$study_db" study new bench --start-year 2026 --horizon 40 --runs 1000 --seed 7 2>/dev/null
    $SW --db "$study_db" study add bench --ids "$ids" 2>/dev/null
    $SW --db "$study_db" study plan bench "1:1" --species "Tilia cordata" --count 10000 --dbh 5 --year 2027 2>/dev/null
    read -r t_study rss_study < <(measure /dev/null $SW --db "$study_db" study run bench --mode monte-carlo --format csv)
    study_line="removal study 10,000 trees × 1,000 runs × 40 years: ${t_study} s, peak $(mb "$rss_study") MB"
fi

# The TUI per keystroke (criterion-free bench binary; it caches its own generated inventory).
largest=$(echo $SIZES | tr ' ' '\n' | sort -n | tail -1)
tui=$(STREETWOOD_BENCH_TREES=$largest cargo bench --quiet --bench tui_keys 2>/dev/null | grep -v '^$' || true)

echo
echo "Streetwood vs bare SQLite (same machine, same run; seconds; ratio = Streetwood / bare; target ≤ 2×)"
printf '%-9s %8s %8s %8s %9s %8s %8s %8s %8s %7s %7s %7s\n' trees import sqlite3 ratio benefits "bare" ratio summary ratio "MB imp" "MB ben" "MB sum"
for r in "${rows[@]}"; do echo "$r"; done
echo
echo "$study_line"
echo
echo "$tui"
echo
echo "Targets: import, benefits and summary ≤ 2× bare SQLite; TUI first frame < 300 ms, p99 < 16 ms; peak memory ≤ 500 MB at 1M."
