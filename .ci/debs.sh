#!/usr/bin/env bash
# Install the named Debian packages that are not installed yet (needs root
# or sudo). Quiet when everything is present.
set -euo pipefail
need=()
for p in "$@"; do
  dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q 'install ok installed' || need+=("$p")
done
((${#need[@]})) || exit 0
echo "installing Debian packages: ${need[*]}"
sudo=''
[ "$(id -u)" -eq 0 ] || sudo=sudo
$sudo apt-get update -qq
DEBIAN_FRONTEND=noninteractive $sudo apt-get install -y -qq --no-install-recommends "${need[@]}" >/dev/null
