#!/usr/bin/env bash
# Install the system programs the tests use, where missing (Debian/Ubuntu):
# chromium (the HTML report is checked in a real browser), poppler-utils (PDF pages
# rendered with pdftoppm), ffmpeg (compressed audio formats such as M4A).
set -euo pipefail
need=()
command -v chromium >/dev/null || need+=(chromium)
command -v pdftoppm >/dev/null || need+=(poppler-utils)
command -v ffmpeg >/dev/null || need+=(ffmpeg)
[ ${#need[@]} -eq 0 ] && exit 0
as_root=()
[ "$(id -u)" -eq 0 ] || as_root=(sudo)
export DEBIAN_FRONTEND=noninteractive
"${as_root[@]}" apt-get update -qq
"${as_root[@]}" apt-get install -y -qq --no-install-recommends "${need[@]}" fonts-dejavu-core >/dev/null
