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

ensure_chromium() {
  if ! command -v chromium >/dev/null 2>&1; then
    apt_install chromium
  fi
}
