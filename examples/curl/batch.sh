#!/usr/bin/env bash
# Four questions about the curing trial in one request: sample size, power, detectable effect,
# and a two-oven comparison (two-sample t). Body: examples/requests/batch.json.
# Prints the answer: one line of JSON, the items in the order sent, each with the body its
# single endpoint returns. (examples/batch/ turns a planning sheet into such a request.)
# Expected output (abridged, from a real run; each fragment appears in the output):
#   "summary":{"succeeded":4,"failed":0}
#   {"id":"cure-90","status":200,"result":{
#   "achieved_power":0.91150838...
#   {"id":"cure-12","status":200,"result":{"power":0.54885268...
#   {"id":"cure-detect-12","status":200,"result":{
#   "cohens_f":0.54174470...
#   {"id":"cure-two-ovens","status":200,"result":{
#   "group_sizes":[60,60]
source "$(dirname "$0")/_common.sh"
post /v1/batch "$REQUESTS/batch.json"
echo
