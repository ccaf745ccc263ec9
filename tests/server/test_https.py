"""What guards a browser's traffic with a shared server: HTTPS with the user's own certificate, cookies that
go over HTTPS only, and one content policy (no evaluated script) on every page, the API page too."""

from __future__ import annotations

import base64
import datetime
import hashlib
import ipaddress
import re
import ssl
import subprocess
import sys
import time
from pathlib import Path

import httpx
import pytest
from fastapi.testclient import TestClient
from servertools import form_fields, free_port

from server.app import create_app
from server.guard import CSP

ROOT = Path(__file__).resolve().parents[2]


def make_certificate(folder: Path, name: str = "site", passphrase: bytes | None = None) -> tuple[Path, Path]:
    """A self-signed certificate for localhost, 127.0.0.1 and 127.0.0.2, and its private key (PEM files)."""
    from cryptography import x509
    from cryptography.hazmat.primitives import hashes, serialization
    from cryptography.hazmat.primitives.asymmetric import ec
    from cryptography.x509.oid import ExtendedKeyUsageOID, NameOID

    key = ec.generate_private_key(ec.SECP256R1())
    subject = x509.Name([x509.NameAttribute(NameOID.COMMON_NAME, "Headsheet test server")])
    now = datetime.datetime.now(datetime.UTC)
    names = [x509.DNSName("localhost")] + [x509.IPAddress(ipaddress.ip_address(a)) for a in ("127.0.0.1", "127.0.0.2")]
    cert = (x509.CertificateBuilder().subject_name(subject).issuer_name(subject).public_key(key.public_key())
            .serial_number(x509.random_serial_number())
            .not_valid_before(now - datetime.timedelta(hours=1)).not_valid_after(now + datetime.timedelta(days=2))
            .add_extension(x509.SubjectAlternativeName(names), critical=False)
            .add_extension(x509.BasicConstraints(ca=True, path_length=None), critical=True)
            .add_extension(x509.KeyUsage(digital_signature=True, key_cert_sign=True, content_commitment=False,
                                         key_encipherment=False, data_encipherment=False, key_agreement=False,
                                         crl_sign=False, encipher_only=False, decipher_only=False), critical=True)
            .add_extension(x509.ExtendedKeyUsage([ExtendedKeyUsageOID.SERVER_AUTH]), critical=False)
            .add_extension(x509.SubjectKeyIdentifier.from_public_key(key.public_key()), critical=False)
            .sign(key, hashes.SHA256()))
    folder.mkdir(parents=True, exist_ok=True)
    cert_path, key_path = folder / f"{name}.crt", folder / f"{name}.key"
    cert_path.write_bytes(cert.public_bytes(serialization.Encoding.PEM))
    encryption = (serialization.BestAvailableEncryption(passphrase) if passphrase
                  else serialization.NoEncryption())
    key_path.write_bytes(key.private_bytes(serialization.Encoding.PEM, serialization.PrivateFormat.PKCS8,
                                           encryption))
    return cert_path, key_path


def _set_cookies(response: httpx.Response) -> list[str]:
    return response.headers.get_list("set-cookie")


def _secure(cookie: str) -> bool:
    return "secure" in {part.split("=", 1)[0].strip().lower() for part in cookie.split(";")[1:]}


# -- HTTPS, end to end ------------------------------------------------------------------------------

def test_a_shared_server_serves_https_with_the_users_certificate_and_its_cookies_are_secure(tmp_path):
    cert, key_file = make_certificate(tmp_path / "tls")
    data = tmp_path / "data"
    port = free_port()
    # Any address but this computer's own loopback names needs the key: a shared server, on loopback only.
    code = (f"from server.main import serve; serve({str(data)!r}, host='127.0.0.2', port={port}, "
            f"certfile={str(cert)!r}, keyfile={str(key_file)!r})")
    server = subprocess.Popen([sys.executable, "-c", code], cwd=ROOT, stdout=subprocess.PIPE, text=True)
    try:
        lines = []
        while not any("access key:" in line for line in lines):
            line = server.stdout.readline()
            if not line:
                break
            lines.append(line)
        printed = "".join(lines)
        assert f"https://127.0.0.2:{port}/" in printed, printed
        assert "http://" not in printed
        key = (data / "access-key.txt").read_text().strip()
        assert f"access key: {key}" in printed

        trust = ssl.create_default_context(cafile=str(cert))  # the browser that trusts this certificate
        with httpx.Client(base_url=f"https://127.0.0.2:{port}", verify=trust, timeout=10) as browser:
            deadline = time.monotonic() + 30
            while True:
                try:
                    refused = browser.get("/api/sheets")
                    break
                except httpx.ConnectError:
                    if time.monotonic() > deadline or server.poll() is not None:
                        raise
                    time.sleep(0.1)
            assert refused.status_code == 401  # served over TLS, and still only with the key
            key_page = browser.get("/key")
            assert key_page.status_code == 200
            assert _set_cookies(key_page) and all(_secure(c) for c in _set_cookies(key_page))
            token = form_fields(key_page.text)["csrf_token"]
            signed_in = browser.post("/key", data={"key": key, "next": "/", "csrf_token": token},
                                     follow_redirects=False)
            assert signed_in.status_code == 303
            access = [c for c in _set_cookies(signed_in) if c.startswith(f"hs_key_{port}=")]
            assert len(access) == 1 and _secure(access[0]) and "httponly" in access[0].lower()
            home = browser.get("/")
            assert home.status_code == 200 and home.url.scheme == "https"
            assert "Hollins Mill" in home.text  # a demo sheet's project: the real page, past the key
    finally:
        server.terminate()
        server.wait(timeout=10)
        server.stdout.close()


def test_share_mode_prints_https_addresses_and_hands_the_certificate_to_the_server(tmp_path, monkeypatch, capsys):
    import uvicorn

    from server import main

    cert, key_file = make_certificate(tmp_path / "tls")
    ran = {}
    monkeypatch.setattr(uvicorn, "run", lambda app, **kw: ran.update(app=app, **kw))
    monkeypatch.setattr(main, "local_addresses", lambda: ["192.0.2.10", "198.51.100.7"])
    main.serve(tmp_path / "data", port=8123, share=True, certfile=cert, keyfile=key_file)
    out = capsys.readouterr().out
    assert ran["ssl_certfile"] == str(cert.resolve()) and ran["ssl_keyfile"] == str(key_file.resolve())
    assert ran["host"] == "0.0.0.0" and ran["app"].state.sharing.share
    for address in ("127.0.0.1", "192.0.2.10", "198.51.100.7"):
        assert f"https://{address}:8123/" in out
    assert "http://" not in out
    # Without a certificate the server says how to stop the key crossing the network in clear.
    ran.clear()
    main.serve(tmp_path / "data", port=8123, share=True)
    out = capsys.readouterr().out
    assert "ssl_certfile" not in ran
    assert "http://192.0.2.10:8123/" in out and "--certfile" in out


def test_over_https_every_cookie_is_secure_and_links_keep_https_but_over_http_none_is(data_dir):
    app = create_app(data_dir, share=True, addresses=["192.0.2.10"])
    key = app.state.sharing.keys.read()
    token = app.state.store.create_view_link(1, "for the checker").token
    for scheme in ("https", "http"):
        # A plain client: it posts the form token the page carries, as a browser's form does.
        with TestClient(app, base_url=f"{scheme}://127.0.0.1", follow_redirects=False) as browser:
            key_page = browser.get("/key")
            signed_in = browser.post("/key", data={"key": key, "next": "/sheets/1",
                                                   "csrf_token": form_fields(key_page.text)["csrf_token"]})
            assert signed_in.status_code == 303
            sheet = browser.get("/sheets/1")
            assert sheet.status_code == 200
            edit = browser.post("/sheets/1", data={**form_fields(sheet.text), "author": "A. Checker"})
            assert edit.status_code == 303
            cookies = _set_cookies(key_page) + _set_cookies(signed_in) + _set_cookies(edit)
            port = 443 if scheme == "https" else 80
            assert {f"hs_{kind}_{port}" for kind in ("csrf", "key", "author")} <= {c.split("=", 1)[0] for c in cookies}
            if scheme == "https":
                assert all(_secure(c) for c in cookies), cookies
            else:  # a browser drops a Secure cookie that comes over plain HTTP, and the form token with it
                assert not any(_secure(c) for c in cookies), cookies
            links = re.findall(r'<code class="link-url">([^<]+)</code>', browser.get("/sheets/1").text)
            assert links == [f"{scheme}://192.0.2.10/view/{token}"]


@pytest.mark.parametrize("case", ["certificate only", "key only", "missing file", "a folder", "not PEM",
                                  "another key", "passphrase"])
def test_a_certificate_that_cannot_be_used_is_refused_in_words_before_anything_starts(tmp_path, monkeypatch,
                                                                                      case):
    import uvicorn

    from server import main

    cert, key_file = make_certificate(tmp_path / "tls")
    _, other_key = make_certificate(tmp_path / "tls", "other")
    _, locked_key = make_certificate(tmp_path / "tls", "locked", passphrase=b"a long passphrase")
    garbage = tmp_path / "tls" / "garbage.pem"
    garbage.write_text("not a certificate\n")
    files, said = {
        "certificate only": ((cert, None), "--certfile was given without --keyfile"),
        "key only": ((None, key_file), "--keyfile was given without --certfile"),
        "missing file": ((tmp_path / "nowhere.crt", key_file), "cannot read the certificate file .*nowhere.crt"),
        "a folder": ((cert, tmp_path), "cannot read the private key file"),
        "not PEM": ((garbage, key_file), "not a PEM certificate and its PEM private key"),
        "another key": ((cert, other_key), "is not the key of the certificate"),
        "passphrase": ((cert, locked_key), "protected by a passphrase"),
    }[case]
    started = []
    monkeypatch.setattr(uvicorn, "run", lambda *a, **kw: started.append(kw))
    with pytest.raises(main.ServeRefused, match=said):
        main.serve(tmp_path / "data", port=8123, share=True, certfile=files[0], keyfile=files[1])
    assert not started and not (tmp_path / "data").exists()  # refused before anything was made


# -- the pages' content policy ----------------------------------------------------------------------

def _directives(policy: str) -> dict[str, list[str]]:
    out = {}
    for part in policy.split(";"):
        words = part.split()
        if words:
            out[words[0]] = words[1:]
    return out


def test_the_api_page_has_every_pages_policy_and_allows_only_its_own_inline_script(client):
    page = client.get("/api/docs")
    assert page.status_code == 200 and page.headers["content-type"].startswith("text/html")
    policy = page.headers["content-security-policy"]
    assert "unsafe-eval" not in policy
    directives = _directives(policy)
    assert "'unsafe-inline'" not in directives["script-src"]
    # Each inline script runs by its exact text's hash; nothing else differs from the other pages' policy.
    inline = re.findall(r"<script>(.*?)</script>", page.text, re.DOTALL)
    assert inline
    hashes = {"'sha256-" + base64.b64encode(hashlib.sha256(s.encode()).digest()).decode() + "'" for s in inline}
    assert set(directives["script-src"]) == {"'self'"} | hashes
    assert {k: v for k, v in directives.items() if k != "script-src"} == \
        {k: v for k, v in _directives(CSP).items() if k != "script-src"}
    # Everything it loads is this server's: the page works on a site network without the internet.
    loaded = re.findall(r"""(?:src|href)\s*=\s*["']?([^"'\s>]+)""", page.text)
    assert loaded and not [u for u in loaded if re.match(r"(?i)(https?:)?//", u)]
    # The operations are on the page itself, also for a browser with scripts off.
    assert re.search(r"<td><code>PUT</code></td><td><code>/api/sheets/\{sheet_id\}</code></td>"
                     r"<td>Replace a sheet[^<]*</td><td>ReplaceIn</td><td>[^<]*409", page.text)
    assert "/api/openapi.json" in page.text
    for other in ("/", "/sheets/1", "/sheets/1/history", "/no/such/page"):
        response = client.get(other)
        assert response.headers["content-security-policy"] == CSP and "unsafe-eval" not in CSP, other
