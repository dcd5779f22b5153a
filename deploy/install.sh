#!/usr/bin/env bash
# Installs pairwatch as a system service on a Debian-family machine. Run as root from a built checkout
# (`npm ci` builds it):   sudo deploy/install.sh
#
# Safe to run again (after `git pull && npm ci`, say): files that are already right are left alone,
# and an existing /etc/pairwatch/site.yaml, env file or udev rule is never overwritten.
#
# DESTDIR=/some/root deploy/install.sh lays the files under that root only: no user is created, no
# ownership is changed and systemd is not touched; the script prints what it would have run instead.
#
# Options:
#   --copy-node-modules  copy this checkout's node_modules and prune dev packages (for a machine
#                        without registry access) instead of `npm ci --omit=dev`
#   --no-start           install and enable, but do not start or restart the service
#
# pairwatch is property monitoring, not a life-safety system. Loop wiring between buildings, surge
# protection and anything on the mains side are for a licensed electrician under local codes.
set -euo pipefail

SCRIPT_NAME=install
# shellcheck source=common.sh
. "$(dirname "${BASH_SOURCE[0]}")/common.sh"

NODE=/usr/bin/node
# What ships, as package.json's "files" field lists it (plus the package metadata).
APP_TREES=(dist migrations config deploy)
APP_FILES=(package.json package-lock.json README.md LICENSE)

SOURCE_DIR="${PAIRWATCH_SOURCE:-$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)}"
COPY_NODE_MODULES=0
START=1
CHANGED=0
UNIT_CHANGED=0
RULES_CHANGED=0

die() {
  printf 'pairwatch install: error: %s\n' "$1" >&2
  [ -n "${2:-}" ] && printf '  fix: %s\n' "$2" >&2
  exit 1
}

for arg in "$@"; do
  case "$arg" in
    --copy-node-modules) COPY_NODE_MODULES=1 ;;
    --no-start) START=0 ;;
    -h | --help)
      sed -n '2,18p' "${BASH_SOURCE[0]}" | sed 's/^# \{0,1\}//'
      exit 0
      ;;
    *) die "unknown option \"$arg\"" "run deploy/install.sh --help for the options" ;;
  esac
done

# --- checks before anything changes -----------------------------------------------------------
[ -f "$SOURCE_DIR/package.json" ] || die "$SOURCE_DIR does not look like a pairwatch checkout (no package.json)"
[ -f "$SOURCE_DIR/dist/src/cli/main.js" ] || die "the app is not built ($SOURCE_DIR/dist/src/cli/main.js is missing)" "run npm ci (it builds) or npm run build in $SOURCE_DIR first"
if ! scratch; then
  [ "$(id -u)" -eq 0 ] || die "this must run as root" "sudo deploy/install.sh"
  [ -x "$NODE" ] || die "$NODE not found" "install Node.js 20 or later (apt-get install nodejs, or the distribution's newer package)"
  node_major="$("$NODE" -p 'process.versions.node.split(".")[0]')"
  [ "$node_major" -ge 20 ] || die "Node.js $node_major is too old" "install Node.js 20 or later"
  command -v systemctl >/dev/null || die "systemctl not found: this installer needs systemd"
  command -v npm >/dev/null || [ "$COPY_NODE_MODULES" -eq 1 ] || die "npm not found" "install npm, or use --copy-node-modules"
fi

# --- helpers that change nothing when the target is already right ------------------------------
ensure_dir() { # path mode
  local target="$ROOT$1"
  if [ ! -d "$target" ]; then
    mkdir -p "$target"
    say "created $1"
    CHANGED=1
  fi
  if [ "$(stat -c '%a' "$target")" != "${2#0}" ]; then
    chmod "$2" "$target"
    CHANGED=1
  fi
}

ensure_owner() { # owner:group path
  if scratch; then
    say "would run: chown $1 $2"
  elif [ "$(stat -c '%U:%G' "$2")" != "$1" ]; then
    chown "$1" "$2"
    say "changed the owner of $2 to $1"
    CHANGED=1
  fi
}

# Copies a file only when its content differs, so a second run leaves mtimes alone. Returns 0 if it wrote.
put_file() { # source dest mode
  local target="$ROOT$2"
  if [ -f "$target" ] && cmp -s "$1" "$target"; then
    [ "$(stat -c '%a' "$target")" = "${3#0}" ] || chmod "$3" "$target"
    return 1
  fi
  mkdir -p "$(dirname "$target")"
  install -m "$3" "$1" "$target"
  CHANGED=1
  return 0
}

# Writes a file only if there is none: for files the user edits.
put_new_file() { # source dest mode
  local target="$ROOT$2"
  if [ -e "$target" ]; then
    say "kept your $2"
    return 1
  fi
  mkdir -p "$(dirname "$target")"
  install -m "$3" "$1" "$target"
  say "created $2"
  CHANGED=1
  return 0
}

# Mirrors a folder: changed files copied, files gone from the source removed from the target.
put_tree() { # source-dir dest-dir
  local written=0 removed=0 rel
  while IFS= read -r -d '' rel; do
    local mode=0644
    [ -x "$1/$rel" ] && mode=0755
    if put_file "$1/$rel" "$2/$rel" "$mode"; then written=$((written + 1)); fi
  done < <(cd "$1" && find . -type f -printf '%P\0' | sort -z)
  if [ -d "$ROOT$2" ]; then
    while IFS= read -r -d '' rel; do
      if [ ! -e "$1/$rel" ]; then
        rm -f "$ROOT$2/$rel"
        removed=$((removed + 1))
      fi
    done < <(cd "$ROOT$2" && find . -type f -printf '%P\0')
    find "$ROOT$2" -mindepth 1 -type d -empty -delete
  fi
  if [ "$written" -gt 0 ] || [ "$removed" -gt 0 ]; then
    say "$2: $written file(s) written, $removed removed"
    CHANGED=1
  fi
}

tmp_dir="$(mktemp -d)"
trap 'rm -rf "$tmp_dir"' EXIT

# --- the service account ----------------------------------------------------------------------
if scratch; then
  say "would run: useradd --system --user-group --groups dialout --home-dir $DATA_DIR --no-create-home --shell /usr/sbin/nologin $SERVICE_USER (if missing)"
elif ! id "$SERVICE_USER" >/dev/null 2>&1; then
  getent group dialout >/dev/null || groupadd --system dialout
  useradd --system --user-group --groups dialout --home-dir "$DATA_DIR" --no-create-home --shell /usr/sbin/nologin \
    --comment "pairwatch loop monitor" "$SERVICE_USER"
  say "created system user $SERVICE_USER (groups: $SERVICE_USER, dialout)"
  CHANGED=1
elif ! id -nG "$SERVICE_USER" | tr ' ' '\n' | grep -qx dialout; then
  usermod -aG dialout "$SERVICE_USER"
  say "added $SERVICE_USER to group dialout"
  CHANGED=1
fi

# --- the application --------------------------------------------------------------------------
ensure_dir "$APP_DIR" 0755
for tree in "${APP_TREES[@]}"; do
  [ -d "$SOURCE_DIR/$tree" ] && put_tree "$SOURCE_DIR/$tree" "$APP_DIR/$tree"
done
for file in "${APP_FILES[@]}"; do
  if [ -f "$SOURCE_DIR/$file" ] && put_file "$SOURCE_DIR/$file" "$APP_DIR/$file" 0644; then say "wrote $APP_DIR/$file"; fi
done

# Runtime packages. A stamp of the lock file and Node version skips the step when nothing changed.
modules_stamp="$(cat "$SOURCE_DIR/package-lock.json" 2>/dev/null | sha256sum | cut -d' ' -f1) node-$(node -v 2>/dev/null || echo none)"
stamp_file="$ROOT$APP_DIR/.modules-stamp"
if [ -d "$ROOT$APP_DIR/node_modules" ] && [ -f "$stamp_file" ] && [ "$(cat "$stamp_file")" = "$modules_stamp" ]; then
  : # up to date
elif scratch && [ "$COPY_NODE_MODULES" -eq 0 ]; then
  say "skipped node_modules in the scratch root (would run: npm ci --omit=dev in $APP_DIR; --copy-node-modules copies this checkout's)"
elif [ "$COPY_NODE_MODULES" -eq 1 ]; then
  [ -d "$SOURCE_DIR/node_modules" ] || die "$SOURCE_DIR/node_modules is missing" "run npm ci in the checkout first"
  rm -rf "$ROOT$APP_DIR/node_modules"
  cp -a "$SOURCE_DIR/node_modules" "$ROOT$APP_DIR/node_modules"
  if command -v npm >/dev/null; then
    (cd "$ROOT$APP_DIR" && npm prune --omit=dev --ignore-scripts --no-audit --no-fund >/dev/null)
  else
    say "npm not found: dev packages were copied too (harmless, only larger)"
  fi
  printf '%s\n' "$modules_stamp" >"$stamp_file"
  say "copied node_modules from the checkout"
  CHANGED=1
else
  # The root package's own scripts (its build) are skipped: dist/ is already built. The native
  # packages then get their install step (prebuilt binary or local build) through npm rebuild.
  (cd "$APP_DIR" && npm ci --omit=dev --ignore-scripts --no-audit --no-fund && npm rebuild better-sqlite3 @serialport/bindings-cpp) ||
    die "npm ci failed in $APP_DIR" "check the internet connection, or run again with --copy-node-modules"
  printf '%s\n' "$modules_stamp" >"$stamp_file"
  say "installed runtime packages (npm ci --omit=dev)"
  CHANGED=1
fi

cat >"$tmp_dir/pairwatch" <<EOF
#!/bin/sh
# Installed by pairwatch's deploy/install.sh.
exec $NODE $APP_DIR/dist/src/cli/main.js "\$@"
EOF
if put_file "$tmp_dir/pairwatch" "$BIN_PATH" 0755; then say "wrote $BIN_PATH"; fi

# --- configuration: never overwrite the user's ------------------------------------------------
ensure_dir "$ETC_DIR" 0750
ensure_owner "root:$SERVICE_USER" "$ETC_DIR"
example="$SOURCE_DIR/config/example.yaml"
if [ -f "$example" ]; then
  # The example keeps its database under a relative data/ folder; on an installed system it belongs in the data folder.
  sed "s#path: data/#path: $DATA_DIR/#" "$example" >"$tmp_dir/site.yaml"
  if put_file "$tmp_dir/site.yaml" "$ETC_DIR/site.yaml.example" 0644; then say "wrote $ETC_DIR/site.yaml.example"; fi
  if put_new_file "$tmp_dir/site.yaml" "$ETC_DIR/site.yaml" 0640; then
    ensure_owner "root:$SERVICE_USER" "$ETC_DIR/site.yaml"
    say "edit $ETC_DIR/site.yaml now: decoders, loops, contacts and mail are the example's"
  fi
fi
cat >"$tmp_dir/env" <<'EOF'
# Environment for the pairwatch service (read by systemd; root and pairwatch only).
# Put secrets named in site.yaml here, e.g. the SMTP password for mail.smtp.pass_env:
# PAIRWATCH_SMTP_PASS=
EOF
if put_new_file "$tmp_dir/env" "$ETC_DIR/env" 0640; then ensure_owner "root:$SERVICE_USER" "$ETC_DIR/env"; fi

# --- data -------------------------------------------------------------------------------------
ensure_dir "$DATA_DIR" 0750
ensure_owner "$SERVICE_USER:$SERVICE_USER" "$DATA_DIR"

# --- udev rule: a commented template the first time, the user's own lines afterwards ----------
{
  echo '# pairwatch decoders: one line per decoder. `pairwatch ports` prints the line for each'
  echo '# attached adapter; paste it below, then: udevadm control --reload && udevadm trigger --subsystem-match=tty'
  echo '#'
  sed -n '/^SUBSYSTEM==/s/^/# /p' "$SOURCE_DIR/deploy/99-pairwatch-decoder.rules.in"
} >"$tmp_dir/rules"
if put_new_file "$tmp_dir/rules" "$RULES_PATH" 0644; then RULES_CHANGED=1; fi

# --- systemd ----------------------------------------------------------------------------------
if put_file "$SOURCE_DIR/deploy/pairwatch.service" "$UNIT_PATH" 0644; then
  say "wrote $UNIT_PATH"
  UNIT_CHANGED=1
fi
[ "$RULES_CHANGED" -eq 1 ] && act udevadm control --reload
[ "$UNIT_CHANGED" -eq 1 ] && act systemctl daemon-reload
if scratch || ! systemctl is-enabled --quiet pairwatch.service 2>/dev/null; then act systemctl enable pairwatch.service; fi
if [ "$START" -eq 1 ]; then
  if scratch; then
    say "would run: systemctl restart pairwatch.service (if anything changed; else systemctl start)"
  elif [ "$CHANGED" -eq 1 ] && systemctl is-active --quiet pairwatch.service; then
    systemctl restart pairwatch.service
    say "restarted the service with the new files"
  else
    systemctl start pairwatch.service
  fi
fi

if [ "$CHANGED" -eq 0 ]; then say "everything was already in place; nothing changed"; fi
cat <<EOF

Next:
  1. pairwatch ports          find the decoder; paste its rule line into $RULES_PATH
  2. edit $ETC_DIR/site.yaml   decoders, loops, contacts, mail; secrets go in $ETC_DIR/env
  3. sudo -u $SERVICE_USER pairwatch check-config $ETC_DIR/site.yaml
  4. sudo -u $SERVICE_USER pairwatch user add YOUR-NAME --role admin --config $ETC_DIR/site.yaml   (someone to sign in as)
  5. sudo -u $SERVICE_USER pairwatch doctor --config $ETC_DIR/site.yaml
  6. sudo systemctl restart pairwatch; watch it with: journalctl -u pairwatch -f
  7. test the whole chain, node to phone, now and each autumn; the daily report proves it is alive.
pairwatch is property monitoring, not a life-safety system. Keep loops low-voltage and apart from
mains wiring; runs between buildings need surge protection and attention to earthing, and mains-side
work is for a licensed electrician under local codes.
EOF
