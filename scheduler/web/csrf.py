"""Forms of the review pages are safe from forgery: a signed double-submit token, and cookies that follow
the deployment's scheme.

Every page gives the browser a random nonce in a cookie (``soakline_csrf``: http-only, SameSite=strict,
path ``/ui``) and writes ``HMAC-SHA256(secret, nonce)`` into a hidden ``csrf`` field of each of its forms.
A form posted to the pages is accepted only when that field is the signature of the nonce cookie sent
with it (:func:`check_form`); otherwise the page answers 403 and nothing is done. This holds for every
form, sign-in and sign-out included:

- a page of another site cannot read ours (same-origin policy), and its posts carry none of our
  cookies (SameSite=strict), so it can neither sign a browser in as someone else nor act for a user;
- a page of the same site (another port or application on the host) does get our cookies sent, and
  can even set its own nonce cookie (cookies are not kept apart by port), but without the server's
  secret it cannot make the signature that goes with any nonce.

The secret is ``SOAKLINE_SECRET_KEY`` when set, else random per API process (forms left open across a
restart of the API must then be reloaded). The standard library's ``hmac`` and ``secrets`` do the work.

``Secure`` on the pages' cookies follows ``SOAKLINE_COOKIE_SECURE`` (:func:`cookie_secure`): ``auto``
(the default) marks them Secure when the request came over https, as the API sees it; behind a TLS
proxy that is the proxy's ``X-Forwarded-Proto``, believed only from ``SOAKLINE_TRUSTED_PROXIES``
(``scheduler.api.app``). So plain http on a host name can sign in, and https keeps its cookies to https.
"""

from __future__ import annotations

import hashlib
import hmac
import re
import secrets

from fastapi import Request
from fastapi.responses import Response

from models.settings import Settings
from scheduler.api.errors import Forbidden

__all__ = [
    "CSRF_COOKIE",
    "CSRF_FIELD",
    "FORGED",
    "check_form",
    "cookie_secure",
    "form_token",
    "page_token",
    "set_nonce",
]

CSRF_COOKIE = "soakline_csrf"
CSRF_FIELD = "csrf"
FORGED = (
    "This form did not come from these pages, or it was opened before the service restarted. "
    "Nothing was done: go back, reload the page and send the form again."
)
_NONCE = re.compile(r"^[A-Za-z0-9_-]{32,64}$")
_PROCESS_SECRET = secrets.token_bytes(32)


def _secret(settings: Settings) -> bytes:
    if settings.secret_key is not None:
        return hashlib.sha256(b"soakline-forms:" + settings.secret_key.get_secret_value().encode()).digest()
    return _PROCESS_SECRET


def form_token(settings: Settings, nonce: str) -> str:
    """The value a form must carry for a browser holding ``nonce``."""
    return hmac.new(_secret(settings), nonce.encode(), hashlib.sha256).hexdigest()


def cookie_secure(request: Request, settings: Settings) -> bool:
    """Whether the pages' cookies are marked Secure on this request (``SOAKLINE_COOKIE_SECURE``)."""
    if settings.cookie_secure == "auto":
        return request.url.scheme == "https"
    return settings.cookie_secure == "true"


def _nonce(request: Request) -> str | None:
    value = request.cookies.get(CSRF_COOKIE)
    return value if value is not None and _NONCE.match(value) else None


def page_token(request: Request, settings: Settings) -> tuple[str, str | None]:
    """(token for this page's forms, new nonce to set in the cookie or None when the browser has one)."""
    nonce = _nonce(request)
    if nonce is not None:
        return form_token(settings, nonce), None
    fresh = secrets.token_urlsafe(32)
    return form_token(settings, fresh), fresh


def set_nonce(response: Response, request: Request, settings: Settings, nonce: str) -> None:
    """Give the browser its nonce (for as long as the browser runs: a session cookie)."""
    response.set_cookie(
        CSRF_COOKIE,
        nonce,
        path="/ui",
        secure=cookie_secure(request, settings),
        httponly=True,
        samesite="strict",
    )


async def check_form(request: Request) -> None:
    """Dependency of every form post: 403 (:data:`FORGED`) unless its ``csrf`` field signs the nonce
    cookie sent with it. The form is read here once; Starlette keeps it for the route's own fields."""
    settings: Settings = request.app.state.settings
    nonce = _nonce(request)
    sent = (await request.form()).get(CSRF_FIELD)
    if (
        nonce is None
        or not isinstance(sent, str)
        or not hmac.compare_digest(sent, form_token(settings, nonce))
    ):
        raise Forbidden(FORGED)
