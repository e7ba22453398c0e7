"""Email delivery against a real SMTP server on loopback (aiosmtpd, started here)."""

from __future__ import annotations

import email
import email.policy
import json
import socket

import pytest
from aiosmtpd.controller import Controller
from folder_state import visible_brief
from test_cli import _write_case

from briefgen.cli import main
from briefgen.config import EmailSpec
from briefgen.deliver.mail import compose


class _Inbox:
    def __init__(self) -> None:
        self.messages: list[tuple[list[str], bytes]] = []

    async def handle_DATA(self, server, session, envelope):  # aiosmtpd's handler hook
        self.messages.append((list(envelope.rcpt_tos), envelope.content))
        return "250 OK"  # RFC 5321 §4.2: 250 means the message was accepted


def _free_port() -> int:
    with socket.socket() as probe:
        probe.bind(("127.0.0.1", 0))
        return probe.getsockname()[1]


def _email_config(port: int) -> str:
    return (
        "delivery:\n  email:\n    host: 127.0.0.1\n"
        f"    port: {port}\n    security: none\n    sender: briefs@example.org\n"
        "    recipients: [a@example.org, b@example.org]\n    subject: 'Brief {date}'\n"
    )


@pytest.fixture
def smtp_server():
    inbox = _Inbox()
    controller = Controller(inbox, hostname="127.0.0.1", port=_free_port())
    controller.start()
    yield controller, inbox
    controller.stop()


def test_the_published_pdf_arrives_attached_with_subject_and_recipients(
    tmp_path, smtp_server, monkeypatch
):
    controller, inbox = smtp_server
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1796169600")  # 2026-12-02 00:00 UTC
    config = _write_case(tmp_path, _email_config(controller.port), formats="[pdf, json]")
    assert main(["build", str(config)]) == 0
    assert len(inbox.messages) == 1
    recipients, raw = inbox.messages[0]
    assert recipients == ["a@example.org", "b@example.org"]
    message = email.message_from_bytes(raw, policy=email.policy.default)
    assert message["Subject"] == "Brief 2026-12-02"
    attachment = next(message.iter_attachments())
    assert attachment.get_filename() == "brief.pdf"
    assert attachment.get_content() == (tmp_path / "out" / "brief.pdf").read_bytes()
    assert "CLI check" in message.get_body(("plain",)).get_content()


def test_no_send_builds_without_mailing(tmp_path, smtp_server):
    controller, inbox = smtp_server
    config = _write_case(tmp_path, _email_config(controller.port), formats="[pdf]")
    assert main(["build", str(config), "--no-send"]) == 0
    assert inbox.messages == []


def test_a_stopped_server_gives_the_delivery_exit_code_and_a_published_brief(tmp_path, capsys):
    config = _write_case(tmp_path, _email_config(_free_port()), formats="[pdf, json]")
    assert main(["build", str(config)]) == 6
    err = " ".join(capsys.readouterr().err.split())
    assert "email not sent" in err and "The brief is published" in err and "Traceback" not in err
    assert set(visible_brief(tmp_path / "out")) == {"brief.pdf", "stats.json"}


def test_the_body_lists_page_one_findings_from_stats_json():
    spec = EmailSpec(host="127.0.0.1", sender="s@example.org", recipients=["r@example.org"])
    stats = {"findings": [{"headline": "North is slower", "text": "by 3 minutes <b>"}]}
    message = compose(spec, b"%PDF", stats, "Title", "2026-12-02")
    assert "North is slower: by 3 minutes <b>" in message.get_body(("plain",)).get_content()
    assert "by 3 minutes &lt;b&gt;" in message.get_body(("html",)).get_content()
    fallback = compose(spec, b"%PDF", {}, "Only the title", "2026-12-02")
    assert "Only the title" in fallback.get_body(("plain",)).get_content()
    assert json.dumps(stats)  # the constructed stats.json shape the stats engineer is adding


def test_a_password_in_the_file_is_refused(tmp_path, capsys):
    config = _write_case(tmp_path, _email_config(25).replace("security: none", "password: x"))
    assert main(["check", str(config)]) == 2
    assert "cannot be written in the config" in " ".join(capsys.readouterr().err.split())


def test_starttls_with_a_certificate_made_here(tmp_path, monkeypatch):
    """RFC 3207: the client upgrades with STARTTLS and checks the server's certificate."""
    import shutil
    import ssl
    import subprocess

    if shutil.which("openssl") is None:
        pytest.skip("the openssl command is not installed, so no test certificate can be made")
    key, cert = tmp_path / "key.pem", tmp_path / "cert.pem"
    subprocess.run(
        ["openssl", "req", "-x509", "-newkey", "rsa:2048", "-nodes", "-days", "1"]
        + ["-keyout", str(key), "-out", str(cert), "-subj", "/CN=127.0.0.1"]
        + ["-addext", "subjectAltName=IP:127.0.0.1"],
        check=True,
        capture_output=True,
    )
    context = ssl.create_default_context(ssl.Purpose.CLIENT_AUTH)
    context.load_cert_chain(cert, key)
    inbox = _Inbox()
    controller = Controller(
        inbox, hostname="127.0.0.1", port=_free_port(), tls_context=context, require_starttls=True
    )
    controller.start()
    try:
        extra = _email_config(controller.port).replace(
            "security: none", f"security: starttls\n    ca_file: {cert}"
        )
        config = _write_case(tmp_path, extra, formats="[pdf]")
        assert main(["build", str(config)]) == 0
        assert len(inbox.messages) == 1
        untrusted = _write_case(
            tmp_path, extra.replace(f"\n    ca_file: {cert}", ""), formats="[pdf]"
        )
        assert main(["build", str(untrusted)]) == 6  # a certificate nobody vouches for
        assert len(inbox.messages) == 1
    finally:
        controller.stop()
