"""Email the published brief: brief.pdf attached, page-1 findings in the body.

The message is built from the published run's files, so what readers get by mail is
byte for byte what the output folder holds. Credentials come only from environment
variables whose names the config gives.
"""

from __future__ import annotations

import html
import json
import logging
import os
import smtplib
import ssl
from email.message import EmailMessage
from email.utils import formatdate, make_msgid
from pathlib import Path

from briefgen.config import EmailSpec, fill_tokens
from briefgen.errors import ConfigError, DeliveryError

log = logging.getLogger(__name__)

MAX_FINDINGS = 6


def credentials(spec: EmailSpec) -> tuple[str, str] | None:
    """The login from the environment, or None when the config names none.

    Raises ConfigError before anything is built when a named variable is unset.
    """
    if not spec.user_env:
        return None
    missing = [
        name for name in (spec.user_env, spec.password_env) if name and not os.environ.get(name)
    ]
    if missing:
        raise ConfigError(
            f"delivery.email names the environment variable {missing[0]}, which is not set; "
            "set it for the run, or pass --no-send."
        )
    return os.environ[spec.user_env], os.environ.get(spec.password_env or "", "")


def page_one_findings(stats: dict) -> list[dict]:
    """Page-1 findings from stats.json (``findings``: dicts with ``headline`` and ``text``)."""
    findings = stats.get("findings")
    if not isinstance(findings, list):
        return []
    usable = [
        item
        for item in findings
        if isinstance(item, dict) and isinstance(item.get("headline"), str)
    ]
    return usable[:MAX_FINDINGS]


def _read_stats(path: Path | None) -> dict:
    if path is None or not path.is_file():
        return {}
    try:
        value = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return {}
    return value if isinstance(value, dict) else {}


def compose(spec: EmailSpec, pdf: bytes, stats: dict, title: str, built_on: str) -> EmailMessage:
    """The message: a plain-text and an HTML body with the findings, and the PDF attached."""
    findings = page_one_findings(stats)
    message = EmailMessage()
    message["Subject"] = fill_tokens(spec.subject, built_on, title=title)
    message["From"] = spec.sender
    message["To"] = ", ".join(spec.recipients)
    message["Date"] = formatdate(localtime=False)
    message["Message-ID"] = make_msgid(domain=spec.sender.rsplit("@", 1)[-1])
    lines = [title, f"Built {built_on}.", ""]
    lines += [f"- {item['headline']}: {item.get('text', '')}".rstrip(": ") for item in findings]
    lines += ["", "The full brief is attached (brief.pdf)."]
    message.set_content("\n".join(lines) + "\n")
    items = "".join(
        f"<li><strong>{html.escape(item['headline'])}</strong> {html.escape(str(item.get('text', '')))}</li>"
        for item in findings
    )
    body = (
        f"<h1>{html.escape(title)}</h1><p>Built {html.escape(built_on)}.</p>"
        + (f"<ul>{items}</ul>" if items else "")
        + "<p>The full brief is attached (brief.pdf).</p>"
    )
    message.add_alternative(f"<!doctype html><html><body>{body}</body></html>", subtype="html")
    message.add_attachment(pdf, maintype="application", subtype="pdf", filename="brief.pdf")
    return message


def _tls_context(spec: EmailSpec) -> ssl.SSLContext:
    # Certificates and host names are always checked; ca_file adds a private authority.
    context = ssl.create_default_context()
    if spec.ca_file:
        try:
            context.load_verify_locations(cafile=os.path.expanduser(spec.ca_file))
        except (OSError, ssl.SSLError) as exc:
            raise ConfigError(
                f"delivery.email.ca_file: cannot load {spec.ca_file} ({exc}); "
                "give a PEM file of trusted certificates."
            ) from None
    return context


def _open(spec: EmailSpec) -> smtplib.SMTP:
    port = spec.smtp_port
    if spec.security == "tls":
        return smtplib.SMTP_SSL(spec.host, port, timeout=spec.timeout, context=_tls_context(spec))
    client = smtplib.SMTP(spec.host, port, timeout=spec.timeout)
    if spec.security == "starttls":
        client.ehlo()
        # RFC 3207: a server that does not offer STARTTLS must not get the message in clear.
        if not client.has_extn("starttls"):
            client.close()
            raise DeliveryError(
                f"{spec.host}:{port} does not offer STARTTLS; "
                "set delivery.email.security to tls or none as the server requires."
            )
        client.starttls(context=_tls_context(spec))
        client.ehlo()
    return client


def _deliver(spec: EmailSpec, message: EmailMessage, recipients: list[str], key: str) -> int:
    """Hand ``message`` to the server for ``recipients``; raise DeliveryError on any failure."""
    login = credentials(spec)
    where = f"{spec.host}:{spec.smtp_port}"
    try:
        with _open(spec) as client:
            if login:
                client.login(*login)
            refused = client.send_message(message, to_addrs=recipients)
    except smtplib.SMTPAuthenticationError as exc:
        raise DeliveryError(
            f"{where} refused the login ({exc.smtp_code}); check the variables "
            f"{spec.user_env} and {spec.password_env}."
        ) from None
    except ssl.SSLError as exc:
        raise DeliveryError(
            f"{where}: the TLS connection failed ({exc.reason or exc}); check the server's "
            "certificate, delivery.email.security and ca_file."
        ) from None
    except smtplib.SMTPRecipientsRefused as exc:
        raise DeliveryError(
            f"{where} refused every recipient ({', '.join(exc.recipients)}); check {key}."
        ) from None
    except (TimeoutError, smtplib.SMTPException, OSError) as exc:
        reason = getattr(exc, "strerror", None) or str(exc) or type(exc).__name__
        raise DeliveryError(
            f"{where}: the email could not be sent ({reason}); check delivery.email.host and port."
        ) from None
    delivered = len(recipients) - len(refused)
    if refused:
        raise DeliveryError(
            f"{where} took the email for {delivered} recipients but refused "
            f"{', '.join(sorted(refused))}; check {key}."
        )
    log.info("sent to %d recipients via %s", delivered, where)
    return delivered


def send(
    spec: EmailSpec, pdf_path: Path, stats_path: Path | None, title: str, built_on: str
) -> int:
    """Send the brief; return the number of recipients. Raises DeliveryError on any failure."""
    credentials(spec)
    message = compose(spec, pdf_path.read_bytes(), _read_stats(stats_path), title, built_on)
    return _deliver(spec, message, list(spec.recipients), "delivery.email.recipients")


def compose_alert(
    spec: EmailSpec, alert: list[str], title: str, built_on: str, reasons: list[str], held: Path
) -> EmailMessage:
    """The short message to ``delivery.alert`` when the publish gate holds a brief; no attachment.

    Its readers run the brief, not read it: it says why the brief was held, where the
    held brief is, and how to send it anyway.
    """
    message = EmailMessage()
    message["Subject"] = f"Held: {fill_tokens(spec.subject, built_on, title=title)}"
    message["From"] = spec.sender
    message["To"] = ", ".join(alert)
    message["Date"] = formatdate(localtime=False)
    message["Message-ID"] = make_msgid(domain=spec.sender.rsplit("@", 1)[-1])
    lines = [
        f"The brief '{title}' built {built_on} was not sent to its "
        f"{len(spec.recipients)} readers, because a check failed:",
        "",
        *[f"- {reason}" for reason in reasons],
        "",
        f"The held brief is in {held}; the previous brief stays published.",
        "To publish and send it anyway, rerun the build with --skip-checks.",
    ]
    message.set_content("\n".join(lines) + "\n")
    return message


def send_alert(
    spec: EmailSpec, alert: list[str], title: str, built_on: str, reasons: list[str], held: Path
) -> int:
    """Send the gate's alert to ``alert``; return the number of recipients."""
    credentials(spec)
    message = compose_alert(spec, alert, title, built_on, reasons, held)
    return _deliver(spec, message, alert, "delivery.alert")
