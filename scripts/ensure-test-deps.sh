#!/usr/bin/env bash
# Makes sure what `npm test` needs beyond npm packages is present: Debian's ffmpeg (video
# decoding) and the tree.avi sample video (test/data/). Does nothing when both are there.
# Installing ffmpeg needs root (or sudo); CI's .ci/run installs it explicitly as well.
set -euo pipefail
root="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"

if ! command -v ffmpeg >/dev/null 2>&1; then
  if [[ "$(id -u)" -eq 0 ]]; then sudo=""; elif command -v sudo >/dev/null 2>&1; then sudo="sudo"; else
    echo "ensure-test-deps: ffmpeg is missing; install it (Debian: apt-get install ffmpeg)" >&2
    exit 1
  fi
  echo "ensure-test-deps: installing ffmpeg from Debian's packages"
  $sudo apt-get update -qq
  DEBIAN_FRONTEND=noninteractive $sudo apt-get install -y -qq --no-install-recommends ffmpeg >/dev/null
fi

bash "$root/scripts/fetch-testdata.sh"
