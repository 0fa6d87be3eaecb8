#!/usr/bin/env bash
# Make headless Chromium from the OS packages available (for the test that renders the HTML report).
#
# Installs Debian's `chromium` only when `command -v chromium` fails, without recommends (they
# add upower, udev, mesa and a notification daemon: nothing a headless render uses). Text uses
# fonts-dejavu-core, which fontconfig already pulls in; it is named so a minimal image has it too.
# Run the browser with the flags and helpers in tests/browser.py (CHROMIUM_FLAGS).
# Idempotent; exit 0 when `chromium --version` works, else one line on stderr and exit 1.
set -euo pipefail
die() { echo "chromium_local: cannot provide chromium: $*" >&2; exit 1; }
export DEBIAN_FRONTEND=noninteractive
PKGS="chromium fonts-dejavu-core"

if command -v chromium >/dev/null; then
  what="already installed"
else
  command -v apt-get >/dev/null || die "chromium is missing and apt-get is not available"
  SUDO=""  # root is needed only to install, so a user can still check an installed chromium
  if [ "$(id -u)" != 0 ]; then
    command -v sudo >/dev/null || die "not root and sudo is not installed"
    SUDO="sudo -n"
  fi
  LOG=/tmp/chromium_local_apt.log
  { : >"$LOG"; } 2>/dev/null || LOG=$(mktemp)  # another user's log from an earlier run
  # shellcheck disable=SC2086  # $SUDO and $PKGS are word lists on purpose
  install() { timeout 900 $SUDO apt-get install -y -qq --no-install-recommends $PKGS </dev/null >>"$LOG" 2>&1; }
  # The package lists are refreshed only when installing from them fails (stale or missing
  # lists); an update costs time and network that a fresh machine image does not need.
  if ! install; then
    # shellcheck disable=SC2086
    timeout 600 $SUDO apt-get update -qq </dev/null >>"$LOG" 2>&1 || die "apt-get update failed (see $LOG)"
    install || die "apt-get install $PKGS failed (see $LOG)"
  fi
  what="installed $PKGS"
fi
# --version starts no browser, so it needs no display, sandbox or profile.
version=$(timeout 60 chromium --version 2>/dev/null) || die "'chromium --version' failed"
echo "chromium_local: $what: $version"
