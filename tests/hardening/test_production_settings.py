"""Production settings (EXOLEDGER_ENV=production), each run in its own `manage.py` process.

The processes run at once (they are slow to start on a busy machine) against an unreachable
database URL: none of these checks needs a database, and none may quietly connect to one.
"""

from __future__ import annotations

import json
import secrets
import subprocess
import sys

import pytest

from tests.hardening.conftest import ROOT, subprocess_env

HOST = "exoledger.example.test"
NO_DATABASE = "postgres://postgres@127.0.0.1:1/unused"

PROBE = r"""
import json, django
django.setup()
from django.conf import settings
from django.test import Client
client = Client(HTTP_HOST="exoledger.example.test")
api = client.get("/api/v1/problems/", secure=True)
page = client.get("/signin/", secure=True)
plain = client.get("/api/v1/problems/")
print(json.dumps({
    "settings": {name: getattr(settings, name, None) for name in [
        "DEBUG", "ALLOWED_HOSTS", "SECURE_HSTS_SECONDS", "SECURE_HSTS_INCLUDE_SUBDOMAINS",
        "SECURE_HSTS_PRELOAD", "SECURE_SSL_REDIRECT", "SESSION_COOKIE_SECURE",
        "CSRF_COOKIE_SECURE", "SESSION_COOKIE_HTTPONLY", "SECURE_CONTENT_TYPE_NOSNIFF",
        "X_FRAME_OPTIONS", "PASSWORD_HASHERS", "DATA_UPLOAD_MAX_MEMORY_SIZE",
        "FILE_UPLOAD_MAX_MEMORY_SIZE", "SECURE_PROXY_SSL_HEADER", "USE_TZ", "TIME_ZONE"]},
    "validators": [v["NAME"].rsplit(".", 1)[1] + ":" + str(v.get("OPTIONS", {}).get("min_length", ""))
                   for v in settings.AUTH_PASSWORD_VALIDATORS],
    "secret_key_length": len(settings.SECRET_KEY),
    "api": {"status": api.status_code, **{k: api.get(k) for k in (
        "Cache-Control", "Strict-Transport-Security", "Content-Security-Policy",
        "X-Frame-Options", "X-Content-Type-Options", "Referrer-Policy")}},
    "page": {"status": page.status_code, **{k: page.get(k) for k in (
        "Cache-Control", "Strict-Transport-Security", "Content-Security-Policy")}},
    "plain_http": {"status": plain.status_code, "location": plain.get("Location")},
}))
"""


def production_env(**overrides) -> dict:
    env = {
        "EXOLEDGER_ENV": "production",
        "EXOLEDGER_SECRET_KEY": secrets.token_urlsafe(50),
        "EXOLEDGER_SEAL_KEY": secrets.token_urlsafe(50),
        "EXOLEDGER_ALLOWED_HOSTS": HOST,
        "DATABASE_URL": NO_DATABASE,
        "DJANGO_SETTINGS_MODULE": "hazards.settings",
    }
    env.update(overrides)
    return subprocess_env(**env)


CASES = {
    "deploy": (["manage.py", "check", "--deploy", "--fail-level", "WARNING"], {}),
    # A short key: the same check must then fail (so the test above can fail).
    "weak_key": (["manage.py", "check", "--deploy", "--fail-level", "WARNING"],
                 {"EXOLEDGER_SECRET_KEY": "short-key"}),
    "no_key": (["manage.py", "check"], {"EXOLEDGER_SECRET_KEY": ""}),
    "no_hosts": (["manage.py", "check"], {"EXOLEDGER_ALLOWED_HOSTS": " , "}),
    "probe": (["-c", PROBE], {}),
}


@pytest.fixture(scope="module")
def runs():
    procs = {
        name: subprocess.Popen([sys.executable, *argv], cwd=ROOT, env=production_env(**env),
                               stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
        for name, (argv, env) in CASES.items()
    }
    out = {}
    for name, proc in procs.items():
        try:
            stdout, stderr = proc.communicate(timeout=150)
        except subprocess.TimeoutExpired:
            proc.kill()
            stdout, stderr = proc.communicate()
        out[name] = subprocess.CompletedProcess(proc.args, proc.returncode, stdout, stderr)
    return out


@pytest.fixture(scope="module")
def probe(runs):
    result = runs["probe"]
    assert result.returncode == 0, result.stderr[-3000:]
    return json.loads(result.stdout.strip().splitlines()[-1])


def test_production_passes_djangos_deployment_checks_at_warning_level(runs):
    result = runs["deploy"]
    assert result.returncode == 0, result.stdout + result.stderr
    assert "System check identified no issues" in result.stdout


def test_a_weak_secret_key_fails_the_deployment_checks(runs):
    result = runs["weak_key"]
    assert result.returncode != 0
    assert "security.W009" in result.stderr + result.stdout


def test_production_refuses_to_start_without_a_secret_key(runs):
    result = runs["no_key"]
    assert result.returncode != 0
    assert "EXOLEDGER_SECRET_KEY must be set" in result.stderr


def test_production_refuses_to_start_without_allowed_hosts(runs):
    result = runs["no_hosts"]
    assert result.returncode != 0
    assert "EXOLEDGER_ALLOWED_HOSTS must list the host names served" in result.stderr


def test_https_only_hsts_for_a_year_with_subdomains_and_secure_cookies(probe):
    s = probe["settings"]
    assert s["DEBUG"] is False and s["ALLOWED_HOSTS"] == [HOST]
    assert s["SECURE_HSTS_SECONDS"] >= 31536000  # one year (ASVS 3.4.1)
    assert s["SECURE_HSTS_INCLUDE_SUBDOMAINS"] and s["SECURE_HSTS_PRELOAD"]
    assert s["SECURE_SSL_REDIRECT"] is True
    assert s["SESSION_COOKIE_SECURE"] and s["CSRF_COOKIE_SECURE"] and s["SESSION_COOKIE_HTTPONLY"]
    assert s["SECURE_CONTENT_TYPE_NOSNIFF"] and s["X_FRAME_OPTIONS"] == "DENY"
    assert s["SECURE_PROXY_SSL_HEADER"] == ["HTTP_X_FORWARDED_PROTO", "https"]
    assert s["USE_TZ"] and s["TIME_ZONE"] == "UTC"
    assert probe["secret_key_length"] >= 50
    assert probe["plain_http"]["status"] == 301
    assert probe["plain_http"]["location"].startswith(f"https://{HOST}/")
    hsts = probe["api"]["Strict-Transport-Security"]
    assert hsts == "max-age=31536000; includeSubDomains; preload"


def test_argon2_hashes_first_and_passwords_need_twelve_characters_and_are_not_common(probe):
    assert probe["settings"]["PASSWORD_HASHERS"][0] == \
        "django.contrib.auth.hashers.Argon2PasswordHasher"
    assert probe["validators"] == [
        "UserAttributeSimilarityValidator:", "MinimumLengthValidator:12",
        "CommonPasswordValidator:", "NumericPasswordValidator:",
    ]


def test_uploads_are_limited_to_five_mebibytes(probe):
    assert probe["settings"]["DATA_UPLOAD_MAX_MEMORY_SIZE"] == 5 * 1024 * 1024
    assert probe["settings"]["FILE_UPLOAD_MAX_MEMORY_SIZE"] == 5 * 1024 * 1024


def test_api_answers_are_never_stored_and_pages_carry_a_strict_csp(probe):
    api, page = probe["api"], probe["page"]
    assert api["status"] == 200 and page["status"] == 200
    assert api["Cache-Control"] == "no-store"
    assert page["Cache-Control"] != "no-store"  # the middleware is about the API only
    csp = page["Content-Security-Policy"]
    for directive in ("default-src 'self'", "script-src 'self'", "object-src 'none'",
                      "frame-ancestors 'none'", "base-uri 'self'"):
        assert directive in csp
    assert "unsafe-inline" not in csp and "unsafe-eval" not in csp
    assert api["X-Frame-Options"] == "DENY" and api["X-Content-Type-Options"] == "nosniff"
    assert api["Referrer-Policy"] == "same-origin"
