# Shared by scripts/start.sh and scripts/test.sh: installs what a fresh Debian machine is missing.
# Sourced, not run; expects to be in the project folder.

as_root() {
  if [ "$(id -u)" = "0" ]; then "$@"; elif command -v sudo >/dev/null 2>&1; then sudo "$@"; else
    echo "✖ '$*' needs root. Run it as root (or install sudo) and try again." >&2; exit 1; fi
}

apt_updated=""
apt_install() {
  if [ -z "$apt_updated" ]; then
    echo "• apt-get update"
    as_root env DEBIAN_FRONTEND=noninteractive apt-get update -qq
    apt_updated=1
  fi
  echo "• apt-get install $*"
  as_root env DEBIAN_FRONTEND=noninteractive apt-get install -y -qq "$@" >/dev/null
}

ensure_node_modules() {
  local want have=""
  want=$(sha256sum package-lock.json | cut -d' ' -f1)
  [ -f node_modules/.beamwarden-lock ] && have=$(cat node_modules/.beamwarden-lock)
  if [ ! -d node_modules ] || [ "$want" != "$have" ]; then
    echo "• Installing npm packages (npm ci)…"
    npm ci --no-audit --no-fund --loglevel=error
    echo "$want" > node_modules/.beamwarden-lock
  fi
}

ensure_postgresql() {
  local bin="${PG_BIN:-/usr/lib/postgresql/15/bin}"
  if [ ! -x "$bin/initdb" ]; then
    # Debian's package would create and start a cluster of its own on port 5432; we only want the binaries.
    as_root mkdir -p /etc/postgresql-common
    if ! grep -qs '^create_main_cluster' /etc/postgresql-common/createcluster.conf; then
      echo "create_main_cluster = false" | as_root tee -a /etc/postgresql-common/createcluster.conf >/dev/null
    fi
    apt_install postgresql
  fi
}

# The browser tests drive Debian's headless build of Chromium (package chromium-headless-shell: the same engine
# without the desktop browser around it; a new browser context costs a tenth of the full browser's CPU). Where that
# package cannot be installed they fall back to Debian's chromium; CHROMIUM_PATH names any other browser.
HEADLESS_SHELL=/usr/lib/chromium/chromium-headless-shell
ensure_chromium() {
  [ -n "${CHROMIUM_PATH:-}" ] && return 0
  if [ ! -x "$HEADLESS_SHELL" ]; then
    ( apt_install chromium-headless-shell ) || echo "• chromium-headless-shell could not be installed; the tests use chromium"
  fi
  if [ ! -x "$HEADLESS_SHELL" ] && ! command -v chromium >/dev/null 2>&1; then
    apt_install chromium
  fi
}
