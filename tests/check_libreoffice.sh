#!/bin/sh
# The workbook read by LibreOffice: live formulas recalculated against the JSON, every
# sheet rendered to PDF with its charts, and a payoff edited with openpyxl flipping the
# Bayes action. Run by .ci/run after `make test`; not part of `make test`, because
# LibreOffice is large. As root it installs libreoffice-calc-nogui and poppler-utils with
# apt-get; elsewhere, without them, it says so and skips.
# Environment: LOPSIDE (the binary), PYTHON (Debian's python3 with python3-openpyxl).
set -u
export LC_ALL=C
: "${LOPSIDE:=build/lopside}" "${PYTHON:=/usr/bin/python3}"
export LOPSIDE

have_tools() {
    command -v soffice >/dev/null 2>&1 && command -v pdfinfo >/dev/null 2>&1 &&
        command -v pdftotext >/dev/null 2>&1
}

if ! have_tools && [ "$(id -u)" = 0 ] && command -v apt-get >/dev/null 2>&1; then
    echo "installing libreoffice-calc-nogui and poppler-utils (a few minutes)"
    DEBIAN_FRONTEND=noninteractive apt-get install -y -qq libreoffice-calc-nogui \
        poppler-utils >/dev/null 2>&1 ||
        { apt-get update -qq >/dev/null 2>&1 &&
          DEBIAN_FRONTEND=noninteractive apt-get install -y -qq libreoffice-calc-nogui \
              poppler-utils >/dev/null 2>&1; }
fi
if ! have_tools; then
    echo "SKIPPED: the LibreOffice check needs soffice (libreoffice-calc-nogui) and"
    echo "pdfinfo/pdftotext (poppler-utils); they are not installed and cannot be installed"
    echo "here (not root, or no apt-get). Install them and run: sh tests/check_libreoffice.sh"
    exit 0
fi
if [ ! -x "$LOPSIDE" ]; then
    echo "no lopside binary at $LOPSIDE: run make first"
    exit 1
fi
SOFFICE=$(command -v soffice) "$PYTHON" tests/reference/check_libreoffice.py
