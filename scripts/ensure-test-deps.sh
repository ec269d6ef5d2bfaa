#!/usr/bin/env bash
# Makes sure what `npm test` needs beyond npm packages is present: Debian's ffmpeg (video
# decoding), Debian's chromium (the dashboard's browser tests, test/browser/) and the tree.avi
# sample video (test/data/). Does nothing when all are there.
# Installing packages needs root (or sudo); CI's .ci/run installs them explicitly as well.
set -euo pipefail
root="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"

missing=()
command -v ffmpeg >/dev/null 2>&1 || missing+=(ffmpeg)
[[ -x /usr/bin/chromium ]] || missing+=(chromium)
if [[ ${#missing[@]} -gt 0 ]]; then
  if [[ "$(id -u)" -eq 0 ]]; then sudo=""; elif command -v sudo >/dev/null 2>&1; then sudo="sudo"; else
    echo "ensure-test-deps: ${missing[*]} missing; install (Debian: apt-get install ${missing[*]})" >&2
    exit 1
  fi
  echo "ensure-test-deps: installing ${missing[*]} from Debian's packages"
  $sudo apt-get update -qq
  DEBIAN_FRONTEND=noninteractive $sudo apt-get install -y -qq --no-install-recommends "${missing[@]}" >/dev/null
fi

bash "$root/scripts/fetch-testdata.sh"
