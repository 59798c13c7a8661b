#!/usr/bin/env bash
# Invented scenario (demo data, not from any real study): a materials lab plans to compare the
# flexural strength of a resin cured for 4, 8 and 12 hours. From earlier batches it expects
# means of 61, 64 and 66 MPa with a within-batch SD of 5 MPa, and wants 90 % power at α = 0.05,
# allowing for 10 % of specimens lost to handling.
set -euo pipefail
URL="${SAMPLEWRIGHT_URL:-http://127.0.0.1:8000}"

echo "== How many specimens per curing time?"
curl --fail-with-body -sS "$URL/v1/sample-size" -H 'Content-Type: application/json' -d '{
  "alpha": 0.05, "target_power": 0.9, "dropout_rate": 0.1,
  "design": {"type": "one_way_anova", "group_means": [61, 64, 66], "sd": 5}
}'
echo
echo "== What power do 12 specimens per curing time give?"
curl --fail-with-body -sS "$URL/v1/power" -H 'Content-Type: application/json' -d '{
  "n_per_group": 12,
  "design": {"type": "one_way_anova", "group_means": [61, 64, 66], "sd": 5}
}'
echo
echo "== What difference could 12 per group detect with 80 % power?"
curl --fail-with-body -sS "$URL/v1/detectable-effect" -H 'Content-Type: application/json' -d '{
  "target_power": 0.8, "n_per_group": 12,
  "design": {"type": "one_way_anova", "groups": 3, "sd": 5}
}'
echo
