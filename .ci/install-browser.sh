#!/usr/bin/env bash
# Install Debian's Chromium for tests/report-browser.test.ts (headless rendering check of the HTML report).
# Idempotent: does nothing when /usr/bin/chromium is already there. Needs root (or sudo) and the Debian archive.
# ISOTRAP_NO_BROWSER=1 skips the install (the browser test then skips itself too).
set -euo pipefail

CHROMIUM=/usr/bin/chromium

if [[ "${ISOTRAP_NO_BROWSER:-}" == "1" ]]; then
  echo "install-browser: ISOTRAP_NO_BROWSER=1, not installing Chromium (the browser test will be skipped)"
  exit 0
fi

if [[ -x "$CHROMIUM" ]]; then
  echo "install-browser: $CHROMIUM already present, nothing to do"
  exit 0
fi

if [[ "$(id -u)" -eq 0 ]]; then
  SUDO=()
elif command -v sudo >/dev/null 2>&1; then
  SUDO=(sudo)
else
  echo "install-browser: $CHROMIUM is missing and this user is not root (and has no sudo); run as root:" >&2
  echo "  apt-get update && apt-get install -y --no-install-recommends chromium" >&2
  exit 1
fi

echo "install-browser: $CHROMIUM not found; running: apt-get update"
"${SUDO[@]}" env DEBIAN_FRONTEND=noninteractive apt-get update
echo "install-browser: running: apt-get install -y --no-install-recommends chromium"
"${SUDO[@]}" env DEBIAN_FRONTEND=noninteractive apt-get install -y --no-install-recommends chromium

if [[ ! -x "$CHROMIUM" ]]; then
  echo "install-browser: apt-get finished but $CHROMIUM is still missing" >&2
  exit 1
fi
echo "install-browser: installed $(dpkg-query -W -f='${Package} ${Version}' chromium)"
