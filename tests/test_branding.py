"""Branding, safely: the accent colour passes the contrast rule, the logo is read only from
under the config's folder and inlined, and WeasyPrint reads nothing but inlined data and
that folder (a loopback HTTP server checks that no request arrives)."""

from __future__ import annotations

import http.server
import io
import os
import threading
from pathlib import Path

import matplotlib.image
import numpy as np
import pytest
import yaml

from briefgen.assets import LOGO_MAX_BYTES, load_logo
from briefgen.cli import demo_config_path
from briefgen.config import load_spec, parse_spec
from briefgen.errors import ConfigError
from briefgen.figures.colour import contrast_ratio

BASE = "title: T\ndata: {path: d.csv}\ntarget: y\n"


def _png() -> bytes:
    buffer = io.BytesIO()
    matplotlib.image.imsave(buffer, np.zeros((4, 8, 3)), format="png")
    return buffer.getvalue()


def _spec(folder: Path, brand: str):
    config = folder / "brief.yaml"
    config.write_text(BASE + brand, encoding="utf-8")
    return load_spec(config)


# --- accent -----------------------------------------------------------------------------


def test_accent_that_passes_is_kept():
    spec = parse_spec(BASE + "brand:\n  accent: '#0072B2'\n", "brief.yaml")
    assert spec.brand.accent == "#0072b2"  # 5.19:1 on white (WCAG 2.1 contrast ratio)


def test_accent_below_4_5_to_1_is_refused_with_a_darker_suggestion():
    with pytest.raises(ConfigError) as caught:
        parse_spec(BASE + "brand:\n  accent: '#F0E442'\n", "brief.yaml")
    message = str(caught.value)
    # Names the file, line and key, the measured ratio and the rule it fails.
    assert message.startswith(
        "brief.yaml line 5: key 'brand.accent' is invalid: #F0E442 reaches only 1.32:1"
    )
    assert "4.5:1 (WCAG 2.1, 1.4.3)" in message
    suggested = message.split("such as ")[1].split(",")[0]
    assert contrast_ratio(suggested, "#ffffff") >= 4.5


@pytest.mark.parametrize("value", ["red", "#12345", "#0072b2; background: url(http://127.0.0.1/x)"])
def test_accent_must_be_a_hex_colour(value):
    with pytest.raises(ConfigError, match="brand.accent"):
        parse_spec(BASE + f"brand:\n  accent: '{value}'\n", "brief.yaml")


# --- logo -------------------------------------------------------------------------------


def test_logo_under_the_config_folder_is_inlined(tmp_path):
    (tmp_path / "art").mkdir()
    (tmp_path / "art" / "logo.png").write_bytes(_png())
    logo = load_logo(_spec(tmp_path, "brand: {logo: art/logo.png}\n"))
    assert logo.media_type == "image/png"
    assert logo.data_uri.startswith("data:image/png;base64,")
    (tmp_path / "mark.svg").write_text(
        '<svg xmlns="http://www.w3.org/2000/svg"/>', encoding="utf-8"
    )
    assert load_logo(_spec(tmp_path, "brand: {logo: mark.svg}\n")).media_type == "image/svg+xml"


def _refused(folder: Path, logo: str) -> str:
    with pytest.raises(ConfigError) as caught:
        load_logo(_spec(folder, f"brand: {{logo: '{logo}'}}\n"))
    message = str(caught.value)
    assert "key 'brand.logo' is invalid" in message
    return message


def test_logo_escapes_are_refused(tmp_path):
    config_folder = tmp_path / "config"
    config_folder.mkdir()
    outside = tmp_path / "outside.png"
    outside.write_bytes(_png())
    # A ../ escape, an absolute path, a symbolic link out, a network URL and a file: URL.
    assert "outside the config's folder" in _refused(config_folder, "../outside.png")
    assert "absolute path" in _refused(config_folder, str(outside))
    os.symlink(outside, config_folder / "link.png")
    assert "outside the config's folder" in _refused(config_folder, "link.png")
    assert "http: address" in _refused(config_folder, "http://127.0.0.1:9/logo.png")
    assert "file: address" in _refused(config_folder, f"file://{outside}")


def test_logo_type_and_size_are_checked(tmp_path):
    (tmp_path / "fake.png").write_text("not an image", encoding="utf-8")
    assert "not a PNG, JPEG or SVG" in _refused(tmp_path, "fake.png")
    (tmp_path / "renamed.jpg").write_bytes(_png())  # a PNG named .jpg
    assert "not a PNG, JPEG or SVG" in _refused(tmp_path, "renamed.jpg")
    (tmp_path / "big.png").write_bytes(_png() + b"\0" * LOGO_MAX_BYTES)
    assert "more than" in _refused(tmp_path, "big.png")
    assert "was not found" in _refused(tmp_path, "missing.png")


def test_check_command_refuses_a_logo_outside_the_folder(tmp_path, capsys):
    from briefgen.cli import main

    (tmp_path / "config").mkdir()
    (tmp_path / "outside.png").write_bytes(_png())
    raw = yaml.safe_load(demo_config_path().read_text(encoding="utf-8"))
    raw["data"]["path"] = str(demo_config_path().parent / raw["data"]["path"])
    raw["brand"] = {"logo": "../outside.png"}
    config = tmp_path / "config" / "brief.yaml"
    config.write_text(yaml.safe_dump(raw), encoding="utf-8")
    assert main(["check", str(config)]) == 2
    assert "key 'brand.logo' is invalid" in " ".join(capsys.readouterr().err.split())


# --- the URL fetcher --------------------------------------------------------------------


class _Recorder(http.server.BaseHTTPRequestHandler):
    hits: list[str] = []

    def do_GET(self):  # noqa: N802 (http.server's name)
        _Recorder.hits.append(self.path)
        self.send_response(404)
        self.end_headers()

    def log_message(self, *args):
        pass


@pytest.fixture
def loopback_server():
    server = http.server.HTTPServer(("127.0.0.1", 0), _Recorder)
    _Recorder.hits = []
    thread = threading.Thread(target=server.serve_forever, daemon=True)
    thread.start()
    yield f"http://127.0.0.1:{server.server_address[1]}"
    server.shutdown()
    server.server_close()


def test_fetcher_refuses_everything_but_data_and_the_folder(tmp_path, loopback_server):
    import weasyprint

    from briefgen.fetcher import LocalOnlyFetcher

    folder = tmp_path / "config"
    folder.mkdir()
    (folder / "inside.png").write_bytes(_png())
    outside = tmp_path / "secret.png"
    outside.write_bytes(_png())
    os.symlink(outside, folder / "link.png")
    png = "data:image/png;base64,iVBORw0KGgoAAAANSUhEUgAAAAEAAAABCAYAAAAfFcSJAAAADUlEQVR42mNkYPhfDwAChwGA60e6kgAAAABJRU5ErkJggg=="
    html = f"""<html lang="en"><head><title>t</title>
    <link rel="stylesheet" href="{loopback_server}/style.css">
    <style>body {{ background: url(file://{outside}); }}</style></head><body>
    <img alt="a" src="{loopback_server}/logo.png">
    <img alt="b" src="file://{folder}/../secret.png">
    <img alt="c" src="file://{folder}/link.png">
    <img alt="d" src="{png}">
    <img alt="e" src="file://{folder}/inside.png">
    </body></html>"""
    fetcher = LocalOnlyFetcher(folder)
    weasyprint.HTML(string=html, url_fetcher=fetcher).write_pdf()
    assert _Recorder.hits == []  # the network address was never asked
    assert sorted(fetcher.refused) == sorted(
        [
            f"{loopback_server}/style.css",
            f"{loopback_server}/logo.png",
            f"file://{outside}",
            f"file://{folder}/../secret.png",
            f"file://{folder}/link.png",
        ]
    )


def test_demo_with_brand_builds_with_logo_and_accent(tmp_path):
    from briefgen.pipeline import build_brief

    raw = yaml.safe_load(demo_config_path().read_text(encoding="utf-8"))
    raw["data"]["path"] = str(demo_config_path().parent / raw["data"]["path"])
    raw["output"]["formats"] = ["html"]
    raw["brand"] = {"logo": "logo.png", "accent": "#0072b2"}
    for key in ("predictors", "time", "log_target"):  # fewer charts: this is about the masthead
        raw.pop(key, None)
    (tmp_path / "logo.png").write_bytes(_png())
    config = tmp_path / "brief.yaml"
    config.write_text(yaml.safe_dump(raw), encoding="utf-8")
    build_brief(load_spec(config), tmp_path / "out", "2026-12-02")
    html = (tmp_path / "out" / "brief.html").read_text(encoding="utf-8")
    assert '<img class="logo" src="data:image/png;base64,' in html
    assert "h2 { color: #0072b2; }" in html
