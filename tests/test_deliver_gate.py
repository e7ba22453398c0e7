"""The publish gate: checks against the last run and the config's limits, and what a failure does.

End to end against a real SMTP server on loopback (aiosmtpd, as in test_deliver_mail.py):
the alert reaches the alert recipients, the readers get nothing, the exit code is the
gate's, and the published brief is the previous one. Data are constructed here.
"""

from __future__ import annotations

import email
import email.policy
import json

import pandas as pd
import pytest
from aiosmtpd.controller import Controller
from folder_state import visible_brief
from test_cli import _write_case
from test_deliver_mail import _email_config, _free_port, _Inbox

from briefgen.cli import main
from briefgen.config import ChecksSpec
from briefgen.deliver.gate import run_checks
from briefgen.errors import HeldError
from briefgen.history.previous import PreviousRun


@pytest.fixture
def smtp_server():
    """A real SMTP server on loopback, as in test_deliver_mail.py."""
    inbox = _Inbox()
    controller = Controller(inbox, hostname="127.0.0.1", port=_free_port())
    controller.start()
    yield controller, inbox
    controller.stop()


READERS = ["a@example.org", "b@example.org"]
ALERT = "ops@example.org"


def _gate_config(port: int) -> str:
    return (
        _email_config(port)
        + f"  alert: [{ALERT}]\n"
        + "checks:\n  min_rows_ratio: 0.8\n  max_rows_ratio: 1.5\n  columns_kept: true\n"
        + "  max_target_missing: 0.1\n"
    )


def _keep_rows(folder, count: int, drop: str | None = None) -> None:
    frame = pd.read_csv(folder / "data.csv")
    frame = frame.iloc[:count]
    (frame.drop(columns=[drop]) if drop else frame).to_csv(folder / "data.csv", index=False)


def test_a_half_loaded_table_alerts_ops_mails_no_reader_and_keeps_the_last_brief(
    tmp_path, smtp_server, capsys, monkeypatch
):
    controller, inbox = smtp_server
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1796169600")  # 2026-12-02
    config = _write_case(tmp_path, _gate_config(controller.port), formats="[pdf, json]")
    assert main(["build", str(config)]) == 0
    assert [recipients for recipients, _ in inbox.messages] == [READERS]
    out = tmp_path / "out"
    before = visible_brief(out)

    _keep_rows(tmp_path, 20, drop="label")  # half the rows, and a column gone
    assert main(["build", str(config)]) == HeldError.exit_code == 7
    recipients, raw = inbox.messages[-1]
    assert len(inbox.messages) == 2 and recipients == [ALERT]  # readers got nothing
    alert = email.message_from_bytes(raw, policy=email.policy.default)
    assert alert["Subject"] == "Held: Brief 2026-12-02"
    assert not list(alert.iter_attachments())
    body = " ".join(alert.get_content().split())
    assert "0.50 times the last run's 40; below the limit checks.min_rows_ratio: 0.80" in body
    assert "Columns of the last run now missing: label (gone)." in body
    assert f"{out / 'held'}" in body and "--skip-checks" in body
    err = " ".join(capsys.readouterr().err.split())
    assert "held:" in err and "An alert went to 1 recipients of delivery.alert" in err
    assert "Traceback" not in err
    assert visible_brief(out) == before  # the published brief is the previous one
    held = json.loads((out / "held" / "stats.json").read_text())
    assert held["checks"]["passed"] is False
    failed = {c["name"] for c in held["checks"]["checks"] if c["passed"] is False}
    assert failed == {"min_rows_ratio", "columns_kept"}

    # After a look, --skip-checks publishes and mails it, and the held copy goes.
    assert main(["build", str(config), "--skip-checks"]) == 0
    assert inbox.messages[-1][0] == READERS and len(inbox.messages) == 3
    assert visible_brief(out) != before and not (out / "held").exists()
    assert not any(p.name.startswith("held-") for p in (out / "runs").iterdir())


def test_a_passing_gate_publishes_and_mails_the_readers_only(tmp_path, smtp_server):
    controller, inbox = smtp_server
    config = _write_case(tmp_path, _gate_config(controller.port), formats="[pdf, json]")
    assert main(["build", str(config)]) == 0
    _keep_rows(tmp_path, 36)  # 0.9 of the rows: within the limits
    assert main(["build", str(config)]) == 0
    assert [r for r, _ in inbox.messages] == [READERS, READERS]
    stats = json.loads((tmp_path / "out" / "stats.json").read_text())
    assert stats["checks"]["passed"] is True and not (tmp_path / "out" / "held").exists()


def test_a_held_brief_says_so_on_page_one(tmp_path, smtp_server):
    controller, _ = smtp_server
    config = _write_case(tmp_path, _gate_config(controller.port), formats="[html, pdf, json]")
    frame = pd.read_csv(tmp_path / "data.csv")
    frame.loc[:9, "minutes"] = None  # 25% of the target missing, over the 10% limit
    frame.to_csv(tmp_path / "data.csv", index=False)
    assert main(["build", str(config), "--no-send"]) == 7
    html = (tmp_path / "out" / "held" / "brief.html").read_text()
    notice = html.index("Held: this brief was not published or emailed")
    assert notice < html.index("What the numbers show")
    assert "10 of 40 (25.0%); above the limit checks.max_target_missing: 10.0%" in html
    assert not (tmp_path / "out" / "current").exists()  # nothing was ever published here


def test_an_alert_that_cannot_be_sent_still_exits_with_the_gate_code(tmp_path, capsys):
    port = _free_port()  # no server listens
    config = _write_case(tmp_path, _gate_config(port), formats="[pdf, json]")
    assert main(["build", str(config), "--no-send"]) == 0  # first run: nothing to send
    _keep_rows(tmp_path, 10)
    assert main(["build", str(config)]) == 7
    err = " ".join(capsys.readouterr().err.split())
    assert "The alert to delivery.alert was not sent either" in err


def _previous(rows: int, missing: dict[str, int]) -> PreviousRun:
    stats = {
        "target": "y",
        "stats": {"accounting": {"rows_read": rows, "missing_by_column": missing}},
    }
    return PreviousRun("then/stats.json", stats, None)


class _Accounting:
    def __init__(self, rows, missing_by_column, target_missing=0):
        self.rows_read = rows
        self.missing_by_column = missing_by_column
        self.target_missing = target_missing
        self.target_not_finite = 0


class _Stats:
    def __init__(self, *args, **kwargs):
        self.accounting = _Accounting(*args, **kwargs)


def test_each_check_passes_fails_or_is_skipped_without_a_previous_run():
    limits = ChecksSpec(min_rows_ratio=0.8, max_rows_ratio=1.25, columns_kept=True)
    now = _Stats(100, {"y": 0, "a": 100, "b": 3})
    result = run_checks(limits, now, _previous(100, {"y": 0, "a": 5, "b": 0, "c": 0}))
    by_name = {c.name: c for c in result.checks}
    assert by_name["min_rows_ratio"].passed and by_name["max_rows_ratio"].passed
    assert by_name["columns_kept"].sentence == (
        "Columns of the last run now missing: a (empty in every row), c (gone)."
    )
    assert not result.passed and result.failures == (by_name["columns_kept"],)
    grown = run_checks(limits, _Stats(130, {"y": 0}), _previous(100, {"y": 0}))
    assert [c.passed for c in grown.checks] == [True, False, True]
    assert "1.30 times the last run's 100; above the limit checks.max_rows_ratio: 1.25" in (
        grown.checks[1].sentence
    )
    first = run_checks(limits, now, PreviousRun("out", None, "no earlier brief was published"))
    assert first.passed and [c.passed for c in first.checks] == [None, None, None]
    assert first.checks[0].sentence == (
        "Rows not compared with the last run: no earlier brief was published."
    )


def test_a_column_that_was_always_empty_is_not_lost():
    limits = ChecksSpec(columns_kept=True)
    result = run_checks(limits, _Stats(10, {"y": 0, "z": 10}), _previous(10, {"y": 0, "z": 10}))
    assert result.passed and result.checks[0].sentence == (
        "Every column of the last run still has values."
    )


def test_the_target_missing_limit_is_inclusive():
    limits = ChecksSpec(max_target_missing=0.1)
    at = run_checks(limits, _Stats(100, {"y": 10}, target_missing=10), _previous(1, {}))
    over = run_checks(limits, _Stats(100, {"y": 11}, target_missing=11), _previous(1, {}))
    assert at.passed and not over.passed


@pytest.mark.parametrize(
    ("extra", "formats", "message"),
    [
        (
            "checks:\n  min_rows_ratio: 0.9\n  max_rows_ratio: 0.5\n",
            "[html, json]",
            "key 'checks.max_rows_ratio' is invalid: it is below min_rows_ratio (0.9)",
        ),
        (
            "checks:\n  min_rows_ratio: 0.9\n",
            "[html]",
            "key 'checks' is invalid: it reads the last run's stats.json; add json",
        ),
        ("compare_with: previous\n", "[pdf]", "key 'compare_with' is invalid"),
        (
            "delivery:\n  alert: [ops@example.org]\n",
            "[pdf, json]",
            "alerts are sent through delivery.email's server; add delivery.email",
        ),
    ],
)
def test_gate_and_comparison_settings_are_checked_by_key(tmp_path, capsys, extra, formats, message):
    config = _write_case(tmp_path, extra, formats=formats)
    assert main(["check", str(config)]) == 2
    assert message in " ".join(capsys.readouterr().err.split())
