#!/usr/bin/env bash
# Diagnostics reference comparison: the reference libraries it names in its
# assertions (same pins as the Python door's test requirements). Safe to
# re-run: pip skips satisfied pins.
set -euo pipefail
python3 -m pip install -q --disable-pip-version-check --root-user-action=ignore \
  numpy==2.4.6 scipy==1.17.1 statsmodels==0.15.0 pytest==9.2.0
