#!/usr/bin/env bash
# Installs what the tests need on a fresh Debian machine (reference libraries for the
# statistics checks, the sqlite3 shell, headless Chromium for browser tests, PostgreSQL, whose
# initdb and pg_ctl internal/pgtest runs from /usr/lib/postgresql/<version>/bin), fetches the Go
# modules, then runs every test, the store's and the web app's again on PostgreSQL, then every
# test again under the race detector. Safe to run again: installed packages are skipped.
set -euo pipefail
cd "$(dirname "$0")/.."

packages=(python3-sklearn python3-statsmodels python3-scipy sqlite3 chromium postgresql)
missing=()
for p in "${packages[@]}"; do
  dpkg -s "$p" >/dev/null 2>&1 || missing+=("$p")
done
if ((${#missing[@]})); then
  echo "installing: ${missing[*]}"
  sudo=""
  [ "$(id -u)" -eq 0 ] || sudo="sudo"
  $sudo apt-get update -qq
  DEBIAN_FRONTEND=noninteractive $sudo apt-get install -y -qq --no-install-recommends "${missing[@]}" >/dev/null
fi

go mod download
go vet ./...
go test ./... "$@"
# The store and the web app again on PostgreSQL: each test on a fresh database of one
# throwaway cluster per test binary (internal/pgtest). Only these two packages run SQL; the
# others would repeat themselves. Under CI=true a missing PostgreSQL fails the pass.
PERTINENT_TEST_DB=postgres go test ./store/ ./web/ "$@"
# Every package again under the race detector but estimate: about 5.5 minutes on the 2-core
# machine against 4 without it (DEVELOPERS.md, Testing). estimate starts no goroutine, so the
# detector has nothing to watch there, and under it its simulations ran past ten minutes.
go test -race $(go list ./... | grep -v '/estimate$') "$@"
