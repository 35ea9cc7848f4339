#!/usr/bin/env bash
# The one command that installs everything the test suite needs and runs all of it.
# Debian packages: ngspice (stress-engine checks), chromium (report checks), postgresql (team
# catalog checks). Python packages: the project with its test extras.
set -euo pipefail
cd "$(dirname "$0")/.."

need=()
command -v ngspice >/dev/null 2>&1 || need+=(ngspice)
command -v chromium >/dev/null 2>&1 || need+=(chromium)
ls /usr/lib/postgresql/*/bin/initdb >/dev/null 2>&1 || need+=(postgresql)
if [ ${#need[@]} -gt 0 ]; then
  echo "installing Debian packages: ${need[*]}"
  SUDO=""; [ "$(id -u)" -ne 0 ] && SUDO="sudo"
  $SUDO apt-get update -qq
  DEBIAN_FRONTEND=noninteractive $SUDO apt-get install -y -qq "${need[@]}" >/dev/null
fi

python3 -m pip install -q --disable-pip-version-check -e ".[test]"
exec python3 -m pytest "$@"
