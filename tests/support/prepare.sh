#!/usr/bin/env bash
# Installs what the test suite needs beyond npm packages (Debian's Chromium for browser journeys,
# PostgreSQL 15 for the data-layer tests on a real server, poppler-utils to read a printed PDF) when it is missing and we may install.
set -euo pipefail
need=()
command -v chromium >/dev/null 2>&1 || need+=(chromium)
[ -x /usr/lib/postgresql/15/bin/initdb ] || need+=(postgresql)
# pdftotext reads the decision brief's PDF back in tests/outlook/brief-pdf.test.ts.
command -v pdftotext >/dev/null 2>&1 || need+=(poppler-utils)
if [ ${#need[@]} -gt 0 ]; then
  if [ "$(id -u)" = 0 ]; then
    echo "Installing ${need[*]} from Debian's packages for the tests…"
    export DEBIAN_FRONTEND=noninteractive
    apt-get update -qq
    apt-get install -y -qq "${need[@]}" >/dev/null
  else
    echo "Missing ${need[*]}: install with 'sudo apt-get install -y ${need[*]}'." >&2
    exit 1
  fi
fi
