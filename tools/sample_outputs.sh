#!/usr/bin/env bash
# Runs every command on the sample files and keeps what each one printed and wrote, so that two
# builds can be compared byte for byte (a restructuring must not change any of it):
#   bash tools/sample_outputs.sh build/firmcall /tmp/before
#   bash tools/sample_outputs.sh build/firmcall /tmp/after && diff -r /tmp/before /tmp/after
# Each case leaves NAME.out (standard output), NAME.err (standard error), NAME.rc (exit code) and
# the files it wrote, in OUT_DIR. The HTML report is kept too. Needs only the build and the samples.
set -uo pipefail
src_exe=$(realpath "${1:?usage: sample_outputs.sh FIRMCALL OUT_DIR}")
out=${2:?usage: sample_outputs.sh FIRMCALL OUT_DIR}
checkout=$(cd "$(dirname "$0")/.." && pwd)
rm -rf "$out" && mkdir -p "$out" && out=$(realpath "$out")
# The executable and the samples are copied to a folder whose path has the same length on every
# machine and checkout (tables cut long paths at a fixed width), and that path is written as <root>.
root=$(mktemp -d /tmp/fcsamples.XXXXXX)
trap 'rm -rf "$root"' EXIT
cp "$src_exe" "$root/firmcall" && cp -r "$checkout/samples" "$root/samples"
exe=$root/firmcall
cd "$root"
s=samples
run() { # NAME ARGS...: one case, run from the checkout, files written into $out
  local name=$1
  shift
  (cd "$out" && "$exe" "$@" >"$name.out" 2>"$name.err"; echo $? >"$name.rc")
}
S=$root/$s
run score_table score "$S/demo_book.yaml"
run score_csv score "$S/demo_book.yaml" --format csv
run score_json score "$S/demo_book.csv" --format json -o scores.json
run score_bad score "$S/bad_rows.csv"
run score_bad_csv score "$S/bad_rows.csv" -f csv
run score_sens score "$S/demo_book.yaml" --sensitivities
run score_sens_csv score "$S/demo_book.yaml" --sensitivities -f csv
run score_grades score "$S/demo_book.yaml" --grades -f csv
run score_physical score "$S/demo_book.yaml" --measure physical -f json
run score_terms score "$S/demo_book.yaml" --horizons 0.5,1,2,3,5,7,10 --model both
run score_terms_csv score "$S/demo_book.yaml" --horizons 0.5,1,2,3,5,7,10 --model both --format csv -o term.csv
run score_terms_json score "$S/demo_book.yaml" --horizons 1,5 --model first-passage -f json
run stress_table stress "$S/demo_book.yaml" --scenarios "$S/stress_scenarios.yaml"
run stress_csv stress "$S/demo_book.yaml" --scenarios "$S/stress_scenarios.yaml" --format csv -o stress.csv --summary-output stress_summary.csv
run stress_json stress "$S/demo_book.yaml" --scenarios "$S/stress_scenarios.yaml" -f json
run stress_grid stress "$S/demo_book.yaml" --equity-shocks 0,-0.1,-0.3 --equity-vol-multipliers 1,1.25,1.5,2
run stress_grid_csv stress "$S/demo_book.yaml" --equity-shocks 0,-0.1,-0.3 --equity-vol-multipliers 1,1.25,1.5,2 -f csv
run stress_reverse stress "$S/demo_book.yaml" --reverse-pd 0.05
run stress_reverse_csv stress "$S/demo_book.yaml" --reverse-pd 0.05 -f csv
run stress_terms stress "$S/demo_book.yaml" --scenarios "$S/stress_scenarios.yaml" --horizons 1,3,5,10 --model both
run stress_terms_csv stress "$S/demo_book.yaml" --scenarios "$S/stress_scenarios.yaml" --horizons 1,3,5,10 --model both -f csv
run history_mle history "$S/history_book.yaml" "$S/history_prices.csv" --balance-sheets "$S/history_balance_sheets.csv" --method mle
run history_iter history "$S/history_book.yaml" "$S/history_prices.csv" -b "$S/history_balance_sheets.csv"
run history_naive_json history "$S/history_book.yaml" "$S/history_prices.csv" -b "$S/history_balance_sheets.csv" -m naive -f json
run history_mle_csv history "$S/history_book.yaml" "$S/history_prices.csv" -b "$S/history_balance_sheets.csv" -m mle -f csv -o mle.csv --series series.csv
run history_score history "$S/history_book.yaml" "$S/history_prices.csv" -b "$S/history_balance_sheets.csv" --score --vol-estimator ewma
run history_bad history "$S/history_book.yaml" "$S/history_bad_prices.csv" -b "$S/history_balance_sheets.csv" -f csv -o bad.csv
run portfolio_table portfolio "$S/demo_book.yaml" --reporting-currency EUR --fx "$S/demo_fx.csv"
run portfolio_mc portfolio "$S/demo_book.yaml" --reporting-currency EUR --fx "$S/demo_fx.csv" --correlation "$S/sector_correlations.yaml" --monte-carlo 200000
run portfolio_stress portfolio "$S/demo_book.yaml" --reporting-currency EUR --fx "$S/demo_fx.csv" --scenarios "$S/stress_scenarios.yaml"
run portfolio_csv portfolio "$S/demo_book.yaml" --reporting-currency EUR --fx "$S/demo_fx.csv" --format csv -o portfolio.csv --summary-output portfolio_summary.csv --distribution-output loss_distribution.csv
run portfolio_json portfolio "$S/demo_book.yaml" --reporting-currency EUR --fx "$S/demo_fx.csv" -f json
for w in 1 2 3 4; do run "record_week$w" score "$S/weekly/week$w.yaml" --record --db weekly.sqlite; done
run runs runs --db weekly.sqlite
run runs_json runs --db weekly.sqlite -f json
run watchlist watchlist --db weekly.sqlite
run watchlist_csv watchlist --db weekly.sqlite -f csv
run attribute attribute --db weekly.sqlite --obligor ZEP-26 --obligor HAL-08
run attribute_csv attribute --db weekly.sqlite -f csv
run track track ZEP-26 --db weekly.sqlite
run track_json track ZEP-26 --db weekly.sqlite -f json
run movers movers --db weekly.sqlite --against 1 --top 6
run movers_csv movers --db weekly.sqlite -f csv
run report report "$S/demo_book.yaml" --scenarios "$S/stress_scenarios.yaml" --names GOR-33,BEL-28,CIN-03,ALD-01 --portfolio --reporting-currency EUR --fx "$S/demo_fx.csv" --db weekly.sqlite --html report.html
run help --help
for c in score history stress runs movers watchlist attribute track portfolio report; do run "help_$c" "$c" --help; done
# The store holds times and paths of this run; what the commands read from it is compared above.
rm -f "$out/weekly.sqlite"
# Paths of the copy inside messages differ from run to run: write them as <root>.
grep -rlF "$root" "$out" | xargs -r sed -i "s#$root#<root>#g"
# Recording times are the clock's: write them as <time>.
grep -lE '[0-9]{4}-[0-9]{2}-[0-9]{2}T[0-9]{2}:[0-9]{2}:[0-9]{2}Z' "$out"/runs*.out | xargs -r sed -i -E 's/[0-9]{4}-[0-9]{2}-[0-9]{2}T[0-9]{2}:[0-9]{2}:[0-9]{2}Z/<time>/g' 
echo "sample outputs: $(ls "$out" | wc -l) files in $out"
