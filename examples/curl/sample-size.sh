#!/usr/bin/env bash
# How many specimens per curing time for 90 % power at alpha 0.05, losing 10 % to handling?
# Body: examples/requests/sample-size.json. Prints the answer: one line of JSON.
# Expected output (abridged, from a real run; each fragment appears in the output):
#   "group_sizes":[27,27,27]
#   "n_total":81
#   "achieved_power":0.91150838...
#   "one_step_smaller":{"group_sizes":[26,26,26],"n_total":78,"power":0.89997115...
#   "enrolment":{"dropout_rate":0.1,"group_sizes":[30,30,30],"n_total":90}
#   "df_denominator":78.0
#   "noncentrality":13.68
source "$(dirname "$0")/_common.sh"
post /v1/sample-size "$REQUESTS/sample-size.json"
echo
