# Shared by install.sh and uninstall.sh (sourced, not run): where pairwatch lives on a system, and
# how a scratch-root run (DESTDIR=/some/root) says what it would do instead of changing the system.
# The caller sets SCRIPT_NAME first, for its messages.
APP_DIR=/opt/pairwatch
ETC_DIR=/etc/pairwatch
DATA_DIR=/var/lib/pairwatch
UNIT_PATH=/etc/systemd/system/pairwatch.service
RULES_PATH=/etc/udev/rules.d/99-pairwatch-decoder.rules
BIN_PATH=/usr/local/bin/pairwatch
SERVICE_USER=pairwatch

ROOT="${DESTDIR:-}"
ROOT="${ROOT%/}"

say() { printf 'pairwatch %s: %s\n' "$SCRIPT_NAME" "$*"; }
scratch() { [ -n "$ROOT" ]; }
# Privileged or system-changing commands: run them for real, or say what would run in a scratch root.
act() {
  if scratch; then
    say "would run: $*"
  else
    "$@"
  fi
}
