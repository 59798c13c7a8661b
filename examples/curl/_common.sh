# Shared by the curl examples: base URL and a POST helper that fails on any non-2xx answer.
# Invented scenario (demo data, not from a real study): a materials lab compares the flexural
# strength of a resin cured for 4, 8 and 12 hours (expected means 61, 64, 66 MPa, SD 5 MPa).
set -euo pipefail
URL="${SAMPLEWRIGHT_URL:-http://127.0.0.1:8000}"
HERE="$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)"
REQUESTS="$HERE/../requests"

post() {  # post PATH FILE [extra curl args...]
  local path="$1" file="$2"
  shift 2
  curl --fail-with-body --silent --show-error --max-time 30 \
    -H 'Content-Type: application/json' --data-binary "@$file" "$@" "$URL$path"
}
