"""`thermofolio serve`: loopback only, nothing outside the output, errors shown, rebuilds."""

from __future__ import annotations

import http.client
import time

import pytest

from conftest import assemble
from generator.commands import serve


def _get(port: int, path: str) -> tuple[int, bytes]:
    conn = http.client.HTTPConnection("127.0.0.1", port, timeout=10)
    conn.request("GET", path)
    resp = conn.getresponse()
    body = resp.read()
    conn.close()
    return resp.status, body


@pytest.fixture(scope="module")
def served(tmp_path_factory):
    serve.POLL_SECONDS = 0.05
    tmp_path = tmp_path_factory.mktemp("serve")
    root = assemble(tmp_path / "hb")
    (tmp_path / "secret.txt").write_text("do not serve", encoding="utf-8")
    server, preview, stop = serve.start(root, tmp_path / "site", 0)
    yield root, server.server_address[1], preview, tmp_path
    stop.set()
    server.shutdown()


def test_binds_to_loopback_and_serves_the_site(served):
    _root, port, preview, _tmp = served
    assert preview.errors == []
    status, body = _get(port, "/index.html")
    assert status == 200 and b"<html" in body


@pytest.mark.parametrize("path", ["/../secret.txt", "/%2e%2e/secret.txt", "/..%2fsecret.txt",
                                  "/%2e%2e%2fsecret.txt", "/species/../../secret.txt",
                                  "//etc/passwd", "/%00index.html", "/..\\secret.txt"])
def test_never_serves_outside_the_output(served, path):
    _root, port, _preview, _tmp = served
    status, body = _get(port, path)
    assert b"do not serve" not in body and b"root:" not in body
    assert status == 404


def test_shows_build_errors_then_recovers(served):
    root, port, preview, _tmp = served
    f = root / "species" / "water-gas.yaml"
    good = f.read_text(encoding="utf-8")
    f.write_text(good.replace("ref: codata-1989", "ref: codata89"), encoding="utf-8")
    deadline = time.time() + 20
    while not preview.errors and time.time() < deadline:
        time.sleep(0.05)
    status, body = _get(port, "/index.html")
    assert status == 500 and b"unknown reference key" in body and b"build-errors" in body
    f.write_text(good, encoding="utf-8")
    while preview.errors and time.time() < deadline + 20:
        time.sleep(0.05)
    status, body = _get(port, "/index.html")
    assert status == 200 and b"build-errors" not in body
