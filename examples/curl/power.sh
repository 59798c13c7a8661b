#!/usr/bin/env bash
# What power do 12 specimens per curing time give?
# Body: examples/requests/power.json. Prints the answer: one line of JSON.
# Expected output (abridged, from a real run; each fragment appears in the output):
#   "power":0.54885268...
#   "df_numerator":2.0
#   "df_denominator":33.0
#   "noncentrality":6.08
#   "group_sizes":[12,12,12]
#   "effect":{"cohens_f":0.41096093...
source "$(dirname "$0")/_common.sh"
post /v1/power "$REQUESTS/power.json"
echo
