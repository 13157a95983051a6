#!/usr/bin/env bash
# C door: cbindgen (pinned, for the header diff check), valgrind and
# pkg-config (for the C tests and the link commands in the README).
set -euo pipefail
CBINDGEN_VERSION=0.29.2
if [ "$(cbindgen --version 2>/dev/null || true)" != "cbindgen $CBINDGEN_VERSION" ]; then
  cargo install cbindgen --version "$CBINDGEN_VERSION" --locked --quiet
fi
missing=()
command -v valgrind >/dev/null || missing+=(valgrind)
command -v pkg-config >/dev/null || missing+=(pkg-config)
command -v g++ >/dev/null || missing+=(g++)
if [ "${#missing[@]}" -gt 0 ]; then
  if [ "$(id -u)" = 0 ]; then SUDO=; else SUDO=sudo; fi
  $SUDO apt-get update -qq
  DEBIAN_FRONTEND=noninteractive $SUDO apt-get install -y -qq "${missing[@]}" >/dev/null
fi
