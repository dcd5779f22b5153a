#!/usr/bin/env bash
# Removes pairwatch installed by deploy/install.sh. Run as root:   sudo deploy/uninstall.sh
#
# Keeps the configuration (/etc/pairwatch), the data and backups (/var/lib/pairwatch), the udev rule
# and the service account, so a later install carries on where this one stopped.
#   --purge   also delete those: the database and its backups are gone for good.
#
# DESTDIR=/some/root removes from under that root only and prints the system commands it would run.
set -euo pipefail

SCRIPT_NAME=uninstall
# shellcheck source=common.sh
. "$(dirname "${BASH_SOURCE[0]}")/common.sh"

PURGE=0

remove() {
  if [ -e "$ROOT$1" ] || [ -L "$ROOT$1" ]; then
    rm -rf -- "$ROOT$1"
    say "removed $1"
  fi
}

for arg in "$@"; do
  case "$arg" in
    --purge) PURGE=1 ;;
    -h | --help)
      sed -n '2,9p' "${BASH_SOURCE[0]}" | sed 's/^# \{0,1\}//'
      exit 0
      ;;
    *)
      printf 'pairwatch uninstall: error: unknown option "%s"\n  fix: the only option is --purge\n' "$arg" >&2
      exit 1
      ;;
  esac
done
if ! scratch && [ "$(id -u)" -ne 0 ]; then
  printf 'pairwatch uninstall: error: this must run as root\n  fix: sudo deploy/uninstall.sh\n' >&2
  exit 1
fi

if scratch; then
  say "would run: systemctl disable --now pairwatch.service"
elif systemctl list-unit-files pairwatch.service >/dev/null 2>&1; then
  systemctl disable --now pairwatch.service 2>/dev/null || true
fi
remove "$UNIT_PATH"
act systemctl daemon-reload
remove "$BIN_PATH"
remove "$APP_DIR"

if [ "$PURGE" -eq 1 ]; then
  remove "$ETC_DIR"
  remove "$DATA_DIR"
  remove "$RULES_PATH"
  act udevadm control --reload
  if scratch; then
    say "would run: userdel $SERVICE_USER"
  elif id "$SERVICE_USER" >/dev/null 2>&1; then
    userdel "$SERVICE_USER" && say "removed user $SERVICE_USER"
  fi
else
  for kept in "$ETC_DIR" "$DATA_DIR" "$RULES_PATH"; do
    [ -e "$ROOT$kept" ] && say "kept $kept (--purge removes it)"
  done
  say "kept the $SERVICE_USER account"
fi
