#!/usr/bin/env bash
# Writes the seed corpora of the fuzz targets into OUT/<target>/ (default build-fuzz/seeds):
# the returns files of the ingest catalogue, a slice of a published returns panel, the
# request bodies and holdings files shown in docs/api.md, and, when the demo generator is
# given, a tiny demo universe. Generated at run time so that no corpus is committed.
#
#   fuzz/make-seeds.sh [OUT] [path/to/factorwatch-demo-universe]
#
# Adding a target: a seed() or copy line naming its directory below.
set -euo pipefail
root="$(cd "$(dirname "$0")/.." && pwd)"
out="${1:-$root/build-fuzz/seeds}"
generator="${2:-}"
rm -rf "$out"
mkdir -p "$out"

# seed TARGET NAME TEXT: one seed file.
seed() { mkdir -p "$out/$1"; printf '%s' "$3" > "$out/$1/$2"; }
# prefixed TARGET NAME PREFIX FILE: a file behind a one-byte prefix (the mode byte of
# fuzz_returns_csv and fuzz_portfolio_body), cut to its first 40 lines to keep runs fast.
prefixed() { mkdir -p "$out/$1"; { printf '%s' "$3"; head -n 40 "$4"; } > "$out/$1/$2"; }

# Returns reader: every catalogue file (one problem each), the price files as prices.
for f in "$root"/tests/ingest-catalogue/*.csv; do
  name=$(basename "$f")
  [ "$name" = catalogue.csv ] && continue
  case "$name" in
    price_*log*) prefixed fuzz_returns_csv "$name" l "$f" ;;
    price_*) prefixed fuzz_returns_csv "$name" s "$f" ;;
    *) prefixed fuzz_returns_csv "$name" r "$f" ;;
  esac
done
# EuStockMarkets (R datasets), wide returns; tests/reference/make_eustock.R.
prefixed fuzz_returns_csv eustock_wide.csv r "$root/tests/reference/eustock_returns.csv"
seed fuzz_returns_csv long_prices.csv $'l\xEF\xBB\xBFdate,asset,return\r\n2024-01-02,A,100\r\n2024-01-03,A,101.5\r\n2024-01-02,"B,1",50\r\n2024-01-03,"B,1",\r\n'

# A tiny demo universe (fictional), when the generator is at hand.
if [ -n "$generator" ] && [ -x "$generator" ]; then
  demo=$(mktemp -d)
  # The generator's smallest universe (20 assets); the wide file cut to 13 dates, since
  # inputs are at most 4096 bytes (fuzz/run-fuzzer.sh).
  "$generator" --out "$demo" --assets 20 --years 1 >/dev/null
  head -n 14 "$demo/returns_wide.csv" >"$demo/wide.csv"
  prefixed fuzz_returns_csv demo_long.csv r "$demo/returns_long.csv"
  prefixed fuzz_returns_csv demo_wide.csv r "$demo/wide.csv"
  prefixed fuzz_returns_csv demo_wide_prices.csv s "$demo/wide.csv"
  rm -rf "$demo"
fi

# Holdings files: the two formats of docs/api.md (PUT /v1/portfolios/{name}).
csv_book=$'# book: invented\r\nasset,weight\r\nZQ-0022,0.01638826872\r\n"ZQ,0023",-0.02155873034\r\n'
json_weights='{"as_of": "2025-12-31", "benchmark": "demo-benchmark", "weights": {"ZQ-0001": 0.1, "ZQ-0002": -2.5e-3}}'
json_holdings=$'{"as_of": null,\n "holdings": [{"asset": "ZQ-0022", "weight": 0.01638826872},\n  {"asset": "ZQ-0023", "weight": 1E-2}]}'
seed fuzz_holdings_csv book.csv "$csv_book"
seed fuzz_holdings_csv blank_and_bom.csv $'\xEF\xBB\xBF\nasset,weight\n\nA,1\n'
seed fuzz_holdings_json weights.json "$json_weights"
seed fuzz_holdings_json holdings.json "$json_holdings"
seed fuzz_portfolio_body book.csv "0$csv_book"
seed fuzz_portfolio_body weights.json "3$json_weights"
seed fuzz_portfolio_body holdings.json "1$json_holdings"

# Request bodies of docs/api.md: a model definition and risk requests.
model='{"method":"ml","factors":4,"window":504,"first_as_of":"2025-11-01"}'
model_all='{"universe":["ZQ-0001","ZQ-0002"],"window":60,"step":5,"method":"pca","factors":2,"basis":"correlation","half_life":30.5,"min_coverage":0.9,"rotation":"promax","kaiser_normalize":false,"align_to":"pinned","pinned_window":null,"smoothing_half_life":10,"min_shared_assets":20,"alert_below":0.8,"alert_below_pinned":0.6}'
risk='{"weights":{"ZQ-0001":0.5,"ZQ-0002":0.3,"ZQ-9999":0.2},"benchmark":"demo-benchmark","trade":{"ZQ-0002":-0.1,"ZQ-0003":0.1}}'
risk_list='{"holdings":[{"asset":"ZQ-0001","weight":1}],"benchmark_weights":[{"asset":"ZQ-0002","weight":1}],"no_benchmark":false}'
risk_stored='{"portfolio":"demo-book","holdings_as_of":"2025-06-30","no_benchmark":true}'
seed fuzz_model_body define.json "$model"
seed fuzz_model_body every_member.json "$model_all"
seed fuzz_risk_body weights.json "$risk"
seed fuzz_risk_body lists.json "$risk_list"
seed fuzz_risk_body stored.json "$risk_stored"
for body in model model_all risk risk_list risk_stored json_weights json_holdings; do
  seed fuzz_json_body "$body.json" "${!body}"
done
seed fuzz_json_body nested.json '[{"a":[1,-2.5e-7,true,null,"\u00e9\ud83d\ude00"]},{"a":{}}]'

# Request heads: a read, an upload with every field the gate looks at, and a hostile one.
seed fuzz_request_head get.txt $'GET /v1/models/demo/exposures?format=csv&assets=ZQ-0001,ZQ-0002 HTTP/1.1\r\nHost: 127.0.0.1:8750\r\nAccept: text/csv\r\n\r\n'
seed fuzz_request_head post.txt $'POST /v1/returns?file=a.csv HTTP/1.1\r\nHost: localhost:8750\r\nOrigin: http://localhost:8750\r\nContent-Length: 12\r\nRange: bytes=0-9\r\n\r\n'
seed fuzz_request_head hostile.txt $'GET /v1/x%FF?format=%FF HTTP/1.1\r\nHost: attacker.example\r\nOrigin: null\r\n\r\n'

for d in "$out"/*/; do echo "make-seeds: $(ls "$d" | wc -l) seeds in $d"; done
