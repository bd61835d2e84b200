#!/usr/bin/env bash
# Make sure Debian's chromium is there for the browser tests (tests/browser). Installs it with
# apt-get when missing and we are root; otherwise says loudly that the browser tests will be
# skipped (or fail, under REQUIRE_BROWSER=1). Never downloads a browser build of its own.
set -euo pipefail

chromium=${RIMEWATCH_CHROMIUM:-/usr/bin/chromium}
if [ -x "$chromium" ]; then
  exit 0
fi
if [ "$(id -u)" = "0" ] && command -v apt-get >/dev/null 2>&1; then
  echo "Installing Debian's chromium for the browser tests..."
  export DEBIAN_FRONTEND=noninteractive
  apt-get update -qq
  apt-get install -y -qq chromium >/dev/null
  exit 0
fi
echo "########################################################################" >&2
echo "## chromium not found at $chromium and not root: browser tests SKIPPED." >&2
echo "## Install it with: sudo apt-get install chromium" >&2
echo "########################################################################" >&2
if [ "${REQUIRE_BROWSER:-0}" = "1" ]; then
  echo "REQUIRE_BROWSER=1: failing instead of skipping." >&2
  exit 1
fi
exit 0
