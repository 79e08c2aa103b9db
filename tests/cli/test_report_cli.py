"""`qamsight report`: a self-contained HTML page of a run, checked as text and in headless Chromium.

The browser check renders the page of `qamsight demo --quick` in Debian's chromium (--headless
--no-sandbox --disable-gpu, networking features off, every host name mapped to nothing), takes a
screenshot and checks that the browser's DOM has every section and figure and that the picture
is not blank: enough non-white pixels, the PASS badge's green and the heat maps' colours present.
tools/test.sh installs chromium (install-deps browser group); without it the test fails unless
QAMSIGHT_ALLOW_NO_BROWSER=1 is set.
"""
import html.parser
import os
import re
import shutil
import subprocess

import pytest

SECTIONS = ["waterfall", "signal", "evm-budget", "modcod"]


class Outline(html.parser.HTMLParser):
    """Counts what a page holds: section ids, svg elements, scripts, external references."""

    def __init__(self):
        super().__init__()
        self.sections, self.svgs, self.scripts, self.external, self.tables = [], 0, 0, [], 0

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == "section":
            self.sections.append(a.get("id"))
        elif tag == "svg":
            self.svgs += 1
        elif tag == "script":
            self.scripts += 1
        elif tag == "table":
            self.tables += 1
        elif tag in ("link", "img", "iframe", "object", "embed"):
            self.external.append(tag)
        for key in ("href", "src", "xlink:href"):
            v = a.get(key)
            if v is not None and not v.startswith("#"):
                self.external.append(f"{tag} {key}={v}")


@pytest.fixture(scope="module")
def demo_folder(tmp_path_factory):
    from conftest import cli_path
    out = tmp_path_factory.mktemp("demo") / "run"
    proc = subprocess.run([cli_path(), "demo", "--quick", "--out", str(out)], capture_output=True, text=True,
                          timeout=900)
    assert proc.returncode == 0, proc.stdout + proc.stderr
    return out, proc.stdout


def test_demo_prints_every_main_job_and_writes_the_report(demo_folder):
    out, stdout = demo_folder
    for needle in ("Regression gate against theory", "EVM budget", "Dominant:", "Predicted:", "MODCOD margins",
                   "Over the pass", "Caution:", "Demo verdicts"):
        assert needle in stdout, needle
    for name in ("waterfall.json", "waterfall.svg", "constellation.svg", "eye.svg", "spectrum.svg",
                 "evm-budget.json", "evm-budget.svg", "link.json", "link-throughput.svg", "report.html"):
        assert (out / name).stat().st_size > 200, name


def test_report_is_self_contained_and_complete(demo_folder, cli):
    out, _ = demo_folder
    page = os.path.join(cli.tmp, "again.html")
    proc = cli.run("report", str(out), "--out", page, "--title", "Regression run 7", check=0)
    assert "4 sections" in proc.stdout
    text = open(page, encoding="utf-8").read()
    o = Outline()
    o.feed(text)
    assert o.sections == SECTIONS
    # waterfall, constellation, eye, spectrum, budget bars, throughput and Es/N0 over the pass
    assert o.svgs >= 7
    assert o.tables >= 4
    assert o.scripts == 0 and o.external == []
    # nothing fetched: no CSS imports or URLs other than in-document fragments (the SVG
    # namespace URI is a name, not a fetch)
    assert "@import" not in text and "@font-face" not in text
    assert re.findall(r"url\((?!#)", text) == []
    assert "<title>Regression run 7</title>" in text
    assert "<?xml" not in text  # inline SVG without XML declarations
    assert "PASS" in text and "licen" in text  # the verdict badge and the transmit caution


def test_report_lists_what_a_run_did_not_produce(cli):
    folder = os.path.join(cli.tmp, "partial")
    os.mkdir(folder)
    cli.run("sweep", "--mod", "qpsk", "--ebn0", "4,6", "--min-errors", "50", "--json",
            os.path.join(folder, "waterfall.json"), "--quiet", check=0)
    proc = cli.run("report", folder, check=0)
    assert "1 sections" in proc.stdout
    assert "not in this run: EVM budget" in proc.stdout
    text = open(os.path.join(folder, "report.html"), encoding="utf-8").read()
    assert "Not in this run" in text and "waterfall" in text


@pytest.mark.parametrize("setup, needle", [
    ("nothing", "none of waterfall.json"),
    ("bad-json", "evm-budget.json: malformed EVM budget JSON"),
    ("bad-svg", "eye.svg: not an SVG document"),
    ("not-a-folder", "not a folder"),
])
def test_report_bad_folders_exit_2(cli, setup, needle):
    folder = os.path.join(cli.tmp, "f")
    if setup != "not-a-folder":
        os.mkdir(folder)
    if setup == "bad-json":
        open(os.path.join(folder, "evm-budget.json"), "w").write("{\"lineup\": ")
    if setup == "bad-svg":
        open(os.path.join(folder, "eye.svg"), "w").write("<html>no figure</html>")
    proc = cli.run("report", folder)
    assert proc.returncode == 2, proc.stdout + proc.stderr
    assert needle in proc.stderr
    assert len(proc.stderr.strip().splitlines()) == 1
    assert not os.path.exists(os.path.join(folder, "report.html"))


def chromium():
    for name in ("chromium", "chromium-browser"):
        path = shutil.which(name)
        if path:
            return path
    if os.environ.get("QAMSIGHT_ALLOW_NO_BROWSER") == "1":
        pytest.skip("no chromium on PATH and QAMSIGHT_ALLOW_NO_BROWSER=1")
    pytest.fail("chromium is not on PATH: install Debian's chromium (QAMSIGHT_DEPS_EXTRA=browser "
                "tools/setup/install-deps.sh; tools/test.sh does)")


def browser(args, tmp):
    flags = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-extensions", "--disable-sync",
             "--disable-background-networking", "--disable-component-update", "--disable-default-apps",
             "--no-first-run", "--no-default-browser-check", "--hide-scrollbars", "--mute-audio",
             "--host-resolver-rules=MAP * ~NOTFOUND", f"--user-data-dir={tmp}/chromium-profile"]
    proc = subprocess.run([chromium(), *flags, *args], capture_output=True, text=True, timeout=300, cwd=tmp)
    assert proc.returncode == 0, proc.stderr[-2000:]
    return proc.stdout


def test_report_renders_in_headless_chromium(demo_folder, cli):
    out, _ = demo_folder
    url = "file://" + str(out / "report.html")
    dom = browser(["--dump-dom", url], cli.tmp)
    o = Outline()
    o.feed(dom)
    assert o.sections == SECTIONS, "the browser's DOM lacks sections"
    assert o.svgs >= 7
    shot = os.path.join(cli.tmp, "report.png")
    browser([f"--screenshot={shot}", "--window-size=1100,7000", url], cli.tmp)
    from PIL import Image  # Debian python3-pil
    img = Image.open(shot).convert("RGB")
    assert img.size == (1100, 7000)
    small = img.resize((275, 1750))
    pixels = list(small.getdata())
    ink = sum(1 for p in pixels if min(p) < 235) / len(pixels)
    assert ink > 0.08, f"page looks blank: {ink:.1%} of pixels are not white"
    # The PASS badge (#1e7a3c) and the yellow end of the density colour map are on the page.
    def near(c, target, tol=40):
        return all(abs(a - b) <= tol for a, b in zip(c, target))
    full = img.getdata()
    assert any(near(p, (0x1e, 0x7a, 0x3c)) for p in full), "no PASS badge green in the screenshot"
    assert any(p[0] > 200 and p[1] > 200 and p[2] < 80 for p in full), "no heat-map yellow in the screenshot"
