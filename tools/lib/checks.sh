# Shared by the tools/check-* scripts (sourced, not run).

# Installs the Debian packages that are missing (as root; uses sudo otherwise), like
# tools/setup does for the build itself.
ensure_packages() {
  local missing=() package
  for package in "$@"; do
    dpkg-query -W -f='${Status}' "$package" 2>/dev/null | grep -q "install ok installed" || missing+=("$package")
  done
  ((${#missing[@]})) || return 0
  echo "installing ${missing[*]}"
  local run_as_root=()
  [ "$(id -u)" -eq 0 ] || run_as_root=(sudo)
  "${run_as_root[@]}" apt-get update -qq
  DEBIAN_FRONTEND=noninteractive "${run_as_root[@]}" apt-get install -y -qq --no-install-recommends "${missing[@]}"
}

# Parallel jobs for builds and checks: every core of the machine.
check_jobs() { nproc; }

# Prints "name: message" and the seconds since the script started.
check_summary() {
  printf '%s: %s (%ds)\n' "$1" "$2" "$SECONDS"
}
