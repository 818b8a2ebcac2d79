"""What the hostile-input tests share: the day they import as, a log's snapshot,
and a TLS certificate with its key."""

import datetime as dt
import shutil
import subprocess

import pytest

from tracker.log.store import Store

TODAY = dt.date(2026, 6, 1)


def snap(path):
    """Every row of the log at ``path`` (to show a refusal changed nothing)."""
    with Store(path, create=False) as s:
        return s.snapshot()


def tls_pair(folder, name="server"):
    """A self-signed certificate and its key in PEM files under ``folder`` (an EC
    key: quick to make); skips the test where openssl is missing."""
    if shutil.which("openssl") is None:
        pytest.skip("openssl is needed to make a test certificate")
    cert, key = folder / f"{name}-cert.pem", folder / f"{name}-key.pem"
    subprocess.run(["openssl", "req", "-x509", "-newkey", "ec", "-pkeyopt", "ec_paramgen_curve:prime256v1",
                    "-nodes", "-keyout", str(key), "-out", str(cert), "-days", "1", "-subj", "/CN=localhost"],
                   check=True, capture_output=True)
    return cert, key
