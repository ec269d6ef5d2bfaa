#!/usr/bin/env bash
# Fetches the test data that is too large to keep in git, into test/data/ (gitignored).
#
#   test/data/tree.avi  a short 320×240 sample video shipped with OpenCV's examples, taken from the
#                       Debian package opencv-doc (downloaded with apt-get, extracted with dpkg-deb,
#                       nothing installed).
#
# Idempotent: a file already present is left alone. Run with `npm run testdata`.
set -euo pipefail

root="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
data="$root/test/data"
target="$data/tree.avi"
member="usr/share/doc/opencv-doc/examples/data/tree.avi"

if [[ -s "$target" ]]; then
  echo "fetch-testdata: $target already present, nothing to do"
  exit 0
fi

for tool in apt-get dpkg-deb; do
  if ! command -v "$tool" >/dev/null 2>&1; then
    echo "fetch-testdata: $tool not found; this script needs a Debian-based system" >&2
    exit 1
  fi
done

work="$(mktemp -d "${TMPDIR:-/tmp}/residuum-testdata.XXXXXX")"
trap 'rm -rf "$work" "$target.part"' EXIT
cd "$work"

echo "fetch-testdata: downloading the opencv-doc package into $work"
if ! apt-get download opencv-doc; then
  # A fresh container often has no package lists; only root may fetch them.
  if [[ "$(id -u)" -eq 0 ]]; then
    echo "fetch-testdata: apt-get download failed; running apt-get update and retrying"
    apt-get update
    apt-get download opencv-doc
  else
    echo "fetch-testdata: apt-get download opencv-doc failed; run 'sudo apt-get update' and try again" >&2
    exit 1
  fi
fi

debs=(opencv-doc_*.deb)
if [[ ! -f "${debs[0]}" ]]; then
  echo "fetch-testdata: apt-get download produced no opencv-doc_*.deb" >&2
  exit 1
fi
echo "fetch-testdata: extracting ${debs[0]}"
dpkg-deb -x "${debs[0]}" x

mkdir -p "$data"
if [[ -f "x/$member" ]]; then
  cp "x/$member" "$target.part"
elif [[ -f "x/$member.gz" ]]; then
  gzip -dc "x/$member.gz" >"$target.part"
else
  echo "fetch-testdata: $member(.gz) not found in ${debs[0]}" >&2
  exit 1
fi
mv "$target.part" "$target"
echo "fetch-testdata: wrote $target ($(wc -c <"$target") bytes)"
