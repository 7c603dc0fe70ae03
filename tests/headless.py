"""Headless Chromium for the browser tests: print to PDF, screenshot, DOM after scripts ran.

Uses Debian's ``chromium`` command-line flags only (no driver, no download). Under CI
(``CI=true``) a missing Chromium or pdfinfo is a failure, since ``.ci/run`` installs both;
elsewhere the tests that need them are skipped with the reason shown.
"""

from __future__ import annotations

import os
import pathlib
import shutil
import subprocess
import tempfile

import pytest

#: Screenshots and PDFs the browser tests keep for a person to look at (ignored by git).
ARTIFACTS = pathlib.Path(__file__).resolve().parent / "artifacts"
FLAGS = ("--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync")
TIMEOUT_S = 120


def need(program: str) -> str:
    """Path of ``program``; fails under CI when it is missing, else skips the test."""
    path = shutil.which(program)
    if path:
        return path
    message = f"{program} is not installed (Debian packages chromium and poppler-utils; .ci/run installs them)"
    if os.environ.get("CI", "").lower() == "true":
        pytest.fail(message)
    pytest.skip(message)


def chromium(url: str, *extra: str) -> subprocess.CompletedProcess:
    """Run Chromium once on ``url`` with a new empty profile; returns the finished process."""
    exe = need("chromium")
    with tempfile.TemporaryDirectory(prefix="periplan-chromium-") as profile:
        proc = subprocess.run([exe, *FLAGS, f"--user-data-dir={profile}", *extra, url],
                              capture_output=True, text=True, timeout=TIMEOUT_S)
    assert proc.returncode == 0, f"chromium failed ({proc.returncode}): {proc.stderr[-1500:]}"
    return proc


def artifact(name: str) -> pathlib.Path:
    ARTIFACTS.mkdir(exist_ok=True)
    return ARTIFACTS / name


def print_pdf(page: pathlib.Path, pdf: pathlib.Path) -> None:
    chromium(page.resolve().as_uri(), f"--print-to-pdf={pdf}", "--no-pdf-header-footer")
    assert pdf.is_file() and pdf.stat().st_size > 0


def screenshot(page: pathlib.Path, png: pathlib.Path, size=(1100, 1500), *extra: str) -> None:
    chromium(page.resolve().as_uri(), f"--screenshot={png}", f"--window-size={size[0]},{size[1]}", *extra)
    assert png.is_file() and png.stat().st_size > 0


def dump_dom(page: pathlib.Path, *extra: str) -> str:
    """The page's DOM after its scripts ran (Chromium's --dump-dom)."""
    return chromium(page.resolve().as_uri(), "--dump-dom", "--virtual-time-budget=2000", *extra).stdout


def pdf_info(pdf: pathlib.Path) -> dict:
    """``pdfinfo`` fields (poppler-utils) of a PDF as a dict of strings."""
    out = subprocess.run([need("pdfinfo"), str(pdf)], capture_output=True, text=True, timeout=60, check=True).stdout
    return {k.strip(): v.strip() for k, v in (ln.split(":", 1) for ln in out.splitlines() if ":" in ln)}
