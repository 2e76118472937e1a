"""The HTML report: structure and content checked in Python, rendering checked in Chromium.

The browser half opens the written file in Debian's headless Chromium, an independent HTML
engine, and checks the screenshot, the console and the parsed DOM. It skips only when
Chromium is missing outside CI; in CI (``CI`` set) a missing browser is a failure.
"""

from __future__ import annotations

import base64
import io
import os
import re
import shutil
import signal
import subprocess
from html import escape
from html.parser import HTMLParser
from types import SimpleNamespace

import matplotlib.image as mpimg
import numpy as np
import pytest
from matplotlib.colors import to_rgb
from PIL import Image

import bayesirl as bi
from bayesirl.report import CAUTION, palette
from bayesirl.report import html as report_html
from bayesirl.report.maps import cell_rewards, map_summary
from bayesirl.report.plots import prior_pdf, top_pairs

# The contract: other pages link to these anchors.
SECTION_IDS = ("verdict", "weights", "correlations", "directions", "structural", "derived",
               "policy-risk", "maps", "diagnostics", "assumptions", "caution")
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"  # the PNG specification's eight-byte file signature


class Page(HTMLParser):
    """Ids, section ids, image attributes and tag names of a page, in document order."""

    def __init__(self, text: str) -> None:
        super().__init__()
        self.ids, self.sections, self.images, self.tags = [], [], [], []
        self.feed(text)

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        self.tags.append(tag)
        if "id" in a:
            self.ids.append(a["id"])
        if tag == "section":
            self.sections.append(a.get("id"))
        if tag == "img":
            self.images.append(a)


def section_of(text: str, sid: str) -> str:
    """The markup of one section (sections do not nest)."""
    start = text.index(f'<section id="{sid}">')
    return text[start:text.index("</section>", start)]


def png_bytes(src: str) -> bytes:
    prefix = "data:image/png;base64,"
    assert src.startswith(prefix), src[:60]
    return base64.b64decode(src[len(prefix):], validate=True)


# -- structure -------------------------------------------------------------------------------
def test_section_ids_are_the_documented_contract():
    assert report_html.SECTION_IDS == SECTION_IDS


@pytest.mark.parametrize("name", ["pass", "fail", "ring"])
def test_every_section_once_and_verdict_first(pages, name):
    report, _, text = pages[name]
    page = Page(text)
    assert page.sections == list(SECTION_IDS)
    assert len(page.ids) == len(set(page.ids)), "duplicate ids"
    assert f'<p class="verdict">{escape(report.verdict)}</p>' in section_of(text, "verdict")


@pytest.mark.parametrize("name, expected", [("pass", 5), ("fail", 5), ("ring", 5)])
def test_images_are_embedded_pngs(pages, name, expected):
    # Park: marginals, pairs, ranks, risk, maps. The ring has no grid: a per-state reward
    # plot takes the maps' place.
    page = Page(pages[name][2])
    assert len(page.images) == expected
    for img in page.images:
        raw = png_bytes(img["src"])
        assert raw[:8] == PNG_SIGNATURE
        with Image.open(io.BytesIO(raw)) as im:
            im.verify()  # Pillow's own decoder checks chunks and CRCs
        pixels = mpimg.imread(io.BytesIO(raw), format="png")
        assert pixels.shape[0] > 100 and pixels.shape[1] > 100
        assert pixels.std() > 0.01, "a blank figure"
        assert img.get("alt")


@pytest.mark.parametrize("name", ["pass", "ring"])
def test_page_is_self_contained(pages, name):
    text = pages[name][2]
    page = Page(text)
    assert not {"script", "link", "iframe", "object", "embed"} & set(page.tags)
    assert not re.search(r"https?://", text)
    assert "url(" not in text
    srcs = re.findall(r'\bsrc="([^"]*)"', text)
    assert srcs and all(s.startswith("data:image/png;base64,") for s in srcs)
    assert f'content="{report_html.CSP}"' in text


@pytest.mark.parametrize("name", ["pass", "fail", "ring"])
def test_caution_verbatim(pages, name):
    assert CAUTION in section_of(pages[name][2], "caution")


def test_banner_only_when_diagnostics_fail(pages):
    assert 'id="trust-banner"' not in pages["pass"][2]
    text = pages["fail"][2]
    banner = text[text.index('id="trust-banner"'):text.index('<section id="verdict">')]
    assert "Do not trust these intervals" in banner
    assert escape(pages["fail"][0].diagnostics["warnings"][0]) in banner
    assert 'id="trust-banner"' in pages["ring"][2]  # its short real run genuinely fails


def test_report_text_is_escaped(pages):
    text = pages["fail"][2]
    assert "<b>mud</b>" not in text
    assert "&lt;b&gt;mud&lt;/b&gt; &amp; &quot;slope&quot;" in text


def test_weights_table_and_marginals(pages):
    report, _, text = pages["pass"]
    part = section_of(text, "weights")
    for row in report.weights:
        assert f'<td class="l">{row["feature"]}</td>' in part
        assert report_html.interval(row["interval"]) in part
        assert escape(row["verdict"]) in part
        assert report_html.num(row["z_score"], ".2f") in part
    assert "prior density" in part and "<img" in part


def test_directions_and_structural_findings_in_words(pages):
    report, _, text = pages["ring"]
    directions = section_of(text, "directions")
    und = directions[directions.index("Undetermined"):directions.index("<h3>Other directions")]
    assert any(d["verdict"] == "undetermined" for d in report.directions)
    for d in report.directions:
        assert escape(d["text"]) in (und if d["verdict"] == "undetermined" else directions)
    structural = section_of(text, "structural")
    assert {f["cause"] for f in report.structural} >= {"constant", "collinear"}
    for f in report.structural:
        assert f"<code>{escape(f['cause'])}</code>" in structural
        assert escape(f["message"]) in structural
    assert "No structural problem" in section_of(pages["pass"][2], "structural")


def test_derived_quantities(pages):
    report, _, text = pages["pass"]
    part = section_of(text, "derived")
    assert report.derived["ratios"], "the park's settled signs give ratios"
    for r in report.derived["ratios"]:
        assert escape(f"{r['numerator']} / {r['denominator']}") in part
        assert report_html.interval(r["interval"]) in part
    for p in report.derived["action_probabilities"]:
        assert f"{report_html.num(p['mean'], '.3f')} {report_html.interval(p['interval'])}" in part


def test_policy_risk_and_maps(pages):
    report, _, text = pages["pass"]
    risk = report.policy_risk
    part = section_of(text, "policy-risk")
    assert report_html.num(risk["bound"]) in part
    assert report_html.num(risk["mean"]) in part
    assert f"{risk['fraction_bound']:.1%}" in part and "<img" in part
    assert "<img" in section_of(text, "maps")
    ring = section_of(pages["ring"][2], "maps")
    assert "<img" in ring and "no grid, so the reward is shown per state" in ring


def test_diagnostics_against_thresholds(pages):
    report, _, text = pages["fail"]
    part = section_of(text, "diagnostics")
    d = report.diagnostics
    for name, rhat in d["rhat"].items():
        assert f'<td class="l">{name}</td><td>{report_html.num(rhat, ".4f")}</td>' in part
    assert f"<td>{report_html.num(1.2, '.4f')}</td><td><span class=\"fail\">" in part
    assert f"&lt; {d['thresholds']['rhat_max']}" in part
    assert f"\u2265 {d['thresholds']['ess_min']}" in part
    assert "E-BFMI chain 0" in part and "divergent transitions" in part
    ring = section_of(pages["ring"][2], "diagnostics")
    assert '<td class="l">a</td><td>\u2013</td>' in ring  # the pinned weight has no R-hat
    assert "rationality" in ring


# -- the numbers behind the figures ------------------------------------------------------
def test_map_summary_is_the_per_cell_reward(park_report):
    # Against the model's own reward table, one solve-free evaluation per draw.
    post = park_report.posterior
    mdp = post.model.likelihood.mdp
    draws = post.weights.reshape(-1, mdp.n_features)  # 400 draws: below the thinning limit
    per_draw = np.array([mdp.reward(w).mean(axis=1) for w in draws])  # (draws, S)
    rows, cols = mdp.grid_shape
    got = map_summary(post, 0.9)
    np.testing.assert_allclose(got["mean"].ravel(), per_draw.mean(axis=0)[: rows * cols],
                               rtol=1e-12, atol=1e-12)
    width = np.quantile(per_draw, 0.95, axis=0) - np.quantile(per_draw, 0.05, axis=0)
    np.testing.assert_allclose(got["width"].ravel(), width[: rows * cols], atol=1e-12)
    assert got["off_map"] == 0


def test_cell_rewards_average_state_action_features_over_actions():
    p = np.zeros((3, 2, 3))
    p[:, :, 0] = 1.0
    phi = np.arange(12, dtype=float).reshape(3, 2, 2)  # (S, A, F)
    mdp = bi.TabularMDP(p, phi, discount=0.9, grid_shape=(1, 2))  # state 2 is off the map
    w = np.array([[[1.0, -2.0], [0.5, 0.0]]])  # (chains=1, draws=2, F)
    post = SimpleNamespace(weights=w, model=SimpleNamespace(likelihood=SimpleNamespace(mdp=mdp)))
    expected = np.array([[0.5 * (phi[s, 0] + phi[s, 1]) @ wd for s in range(3)] for wd in w[0]])
    np.testing.assert_allclose(cell_rewards(post), expected, rtol=1e-14)
    assert map_summary(post, 0.9)["off_map"] == 1


def test_prior_pdf_matches_closed_forms():
    x = np.linspace(-4, 4, 9)
    loc, scale = np.array([0.0, 1.0]), np.array([2.0, 0.5])
    normal = np.exp(-0.5 * ((x - 1.0) / 0.5) ** 2) / (0.5 * np.sqrt(2 * np.pi))
    np.testing.assert_allclose(prior_pdf(bi.Normal(loc, scale), 2, 1, x), normal, rtol=1e-12)
    laplace = np.exp(-np.abs(x) / 2.0) / 4.0
    np.testing.assert_allclose(prior_pdf(bi.Laplace(loc, scale), 2, 0, x), laplace, rtol=1e-12)
    uniform = np.where((x >= -1) & (x <= 3), 0.25, 0.0)
    np.testing.assert_allclose(prior_pdf(bi.Uniform(-1, 3), 2, 0, x), uniform, rtol=1e-12)
    assert prior_pdf(bi.LogNormal(0, 1), 1, 0, x) is None


def test_top_pairs_orders_by_absolute_correlation():
    rng = np.random.default_rng(0)
    z = rng.standard_normal((4000, 3))
    draws = np.column_stack([z[:, 0], -0.9 * z[:, 0] + 0.3 * z[:, 1], z[:, 2],
                             0.5 * z[:, 2] + z[:, 1], np.ones(4000)])
    got = top_pairs(draws, k=2)
    assert [(i, j) for i, j, _ in got] == [(0, 1), (2, 3)]
    assert got[0][2] < -0.9 and all(4 not in (i, j) for i, j, _ in got)


# -- a real browser ---------------------------------------------------------------------------
def _chromium_path() -> str | None:
    found = shutil.which("chromium")
    return found or ("/usr/bin/chromium" if os.access("/usr/bin/chromium", os.X_OK) else None)


@pytest.fixture(scope="module")
def chromium():
    exe = _chromium_path()
    if exe is None:
        if os.environ.get("CI"):
            pytest.fail("CI is set but chromium is missing; .ci/run installs it with apt-get")
        pytest.skip("chromium is not installed (Debian: apt-get install -y chromium); "
                    "the browser checks need a real browser")
    return exe


def browse(exe: str, profile, url: str, *flags: str) -> tuple[str, str]:
    """Run headless Chromium on ``url``; return stdout and stderr."""
    cmd = [exe, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic",
           "--no-first-run", "--disable-background-networking", "--disable-component-update",
           "--disable-sync", f"--user-data-dir={profile}", "--enable-logging=stderr", "--v=0",
           *flags, url]
    # Own process group: on a hang, the browser's helper processes go down with it.
    proc = subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                            start_new_session=True)
    try:
        out, err = proc.communicate(timeout=60)
    except subprocess.TimeoutExpired:
        os.killpg(proc.pid, signal.SIGKILL)
        proc.communicate()
        pytest.fail(f"chromium did not finish within 60 s on {url}")
    return out, err


def console_messages(stderr: str) -> list[str]:
    """Page console lines (Chromium logs them as ``CONSOLE``) and uncaught errors."""
    return [ln for ln in stderr.splitlines() if re.search(r":CONSOLE[:(]|Uncaught", ln)]


def screenshot(exe, tmp_path, path, name) -> np.ndarray:
    png = tmp_path / f"{name}.png"
    _, err = browse(exe, tmp_path / f"profile-{name}", path.as_uri(), f"--screenshot={png}",
                    "--window-size=1200,3000")
    assert png.exists(), err[-2000:]
    assert not console_messages(err), console_messages(err)
    with Image.open(png) as im:
        return np.asarray(im.convert("RGB"), dtype=float)


def near(pixels: np.ndarray, rgb, tol: float = 12.0) -> int:
    """Number of pixels within ``tol`` (Euclidean, 0-255 scale) of a colour."""
    return int((np.linalg.norm(pixels - np.asarray(rgb, dtype=float), axis=-1) < tol).sum())


def test_browser_renders_page_without_console_errors(chromium, pages, tmp_path):
    fail = screenshot(chromium, tmp_path, pages["fail"][1], "fail")
    assert fail.shape == (3000, 1200, 3)
    packed = (fail[..., 0] * 65536 + fail[..., 1] * 256 + fail[..., 2]).astype(np.int64)
    assert fail.std() > 10 and np.unique(packed).size > 200, "blank page"
    # The banner's background (#fbe3dc) shows near the top, and only when diagnostics fail.
    assert near(fail[:600], (0xFB, 0xE3, 0xDC)) > 20_000
    passing = screenshot(chromium, tmp_path, pages["pass"][1], "pass")
    assert near(passing[:600], (0xFB, 0xE3, 0xDC)) < 100
    # The marginal histograms (the posterior colour at alpha 0.8 over white: 0.8 c + 0.2 *
    # 255) were decoded and painted by the browser, not just present as markup.
    bars = 0.8 * 255 * np.asarray(to_rgb(palette.POSTERIOR)) + 51
    assert near(passing, bars) > 5_000


def test_browser_dom_has_every_section(chromium, pages, tmp_path):
    report, path, _ = pages["ring"]
    dom, err = browse(chromium, tmp_path / "profile-dom", path.as_uri(), "--dump-dom")
    assert not console_messages(err), console_messages(err)
    page = Page(dom)
    assert page.sections == list(SECTION_IDS)
    # The ring has no grid: marginals, pairs, ranks, risk and the per-state reward plot.
    assert len(page.images) == 5 and "trust-banner" in page.ids
    assert escape(CAUTION) in dom


def test_browser_check_sees_a_blocked_external_resource(chromium, pages, tmp_path):
    # Negative control: the same page with one external image must log a policy violation,
    # which shows both that the console check can fail and that the page's policy blocks
    # anything that is not embedded (no request leaves: the policy refuses it first).
    text = pages["ring"][2].replace("</main>", '<img src="https://example.invalid/x.png"></main>')
    path = tmp_path / "external.html"
    path.write_text(text, encoding="utf-8")
    _, err = browse(chromium, tmp_path / "profile-control", path.as_uri(), "--dump-dom")
    assert any("Content Security Policy" in m for m in console_messages(err)), err[-2000:]
