#!/usr/bin/env bash
# The sample-size justification for the curing trial, as Markdown to paste into a protocol.
# Body: examples/requests/report.json. Prints the answer: one line of JSON whose "text" is the
# justification ("result" is the /v1/sample-size answer). To read only the text, pipe it
# through `jq -r .text`.
# Expected output (abridged, from a real run; each fragment appears in the output):
#   "format":"markdown"
#   "title":"Sample-size justification"
#   has 27 units per group (81 in total). Its power is 0.9115.
#   the power would be 0.89997, short of the target
#   30 in each of the 3 groups, 90 in total
#   "request_digest":"c54adaed5d092ec7766841ce29ce16d79092f6e8930d530f80f17102fc7c44c0"
source "$(dirname "$0")/_common.sh"
post /v1/report "$REQUESTS/report.json"
echo
