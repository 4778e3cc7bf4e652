#!/usr/bin/env bash
# Side-by-side NPA benchmark: bellgap (release binary, `npa --solver auto`) against SCS through
# cvxpy, written the obvious way, on every case of `cargo bench --bench npa`. Not part of
# `cargo test`. Creates its own Python venv (in $PEER_VENV, default benches/peer/.venv) and
# installs cvxpy (which brings SCS) from the package registry.
#
#   bash benches/peer/run.sh                 # every case, 600 s per run at most
#   PEER_TIMEOUT=120 PEER_CASES="0 1 2" bash benches/peer/run.sh
#
# Prints a Markdown table: time, peak memory (max RSS of each run's own process), the value each
# reports, and for bellgap the verified bound.
set -euo pipefail
here="$(cd "$(dirname "$0")" && pwd)"
root="$(cd "$here/../.." && pwd)"
venv="${PEER_VENV:-$here/.venv}"
if [ ! -x "$venv/bin/python" ]; then
  python3 -m venv "$venv"
  "$venv/bin/pip" install --quiet --upgrade pip
  "$venv/bin/pip" install --quiet "cvxpy>=1.4" "scs>=3.2"
fi
cd "$root"
cargo build --release --quiet
cases="$(mktemp -d)"
trap 'rm -rf "$cases"' EXIT
cargo bench --quiet --bench npa -- --export "$cases" >/dev/null
"$venv/bin/python" "$here/peer.py" --cases "$cases" --bellgap "$root/target/release/bellgap" \
  --timeout "${PEER_TIMEOUT:-600}" ${PEER_CASES:+--only $PEER_CASES}
