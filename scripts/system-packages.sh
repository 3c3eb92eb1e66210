#!/usr/bin/env bash
# Install the Debian packages cardgen needs (WeasyPrint's libraries, poppler-utils for
# PDF checks, a font) when they are missing. As root this runs apt-get; otherwise it
# prints the exact command to run and stops.
set -euo pipefail
packages=(libpango-1.0-0 libpangoft2-1.0-0 libharfbuzz-subset0 poppler-utils fonts-dejavu-core "$@")
missing=()
for p in "${packages[@]}"; do
  dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed" || missing+=("$p")
done
[ ${#missing[@]} -eq 0 ] && exit 0
if [ "$(id -u)" -eq 0 ] && command -v apt-get >/dev/null; then
  echo "installing system packages: ${missing[*]}"
  apt-get update -qq
  DEBIAN_FRONTEND=noninteractive apt-get install -y -qq "${missing[@]}" >/dev/null
else
  echo "cardgen needs these Debian packages; run:" >&2
  echo "  sudo apt-get install ${missing[*]}" >&2
  exit 1
fi
