"""The HTML report in a real headless browser: it renders, every image loads, a screenshot is not blank.

Needs Debian's `chromium` (`.ci/run` installs it and sets CI_REQUIRE_BROWSER=1, so there a missing
browser fails instead of skipping).
"""

import html.parser
import json
import os

import matplotlib.image
import numpy as np
import pytest

from cohop.charts._mpl import HIT_COLOURS
from tests.charts.answers import replan_report
from tests.report import browser

pytestmark = pytest.mark.browser

PROBE = """<script>
window.addEventListener("load", () => {
  const images = [...document.images].map(i => ({id: i.id, complete: i.complete, width: i.naturalWidth,
                                                  height: i.naturalHeight}));
  const pre = document.createElement("pre");
  pre.id = "probe";
  pre.textContent = JSON.stringify({images, sections: [...document.querySelectorAll("section")].map(s => s.id),
                                    scrollHeight: document.documentElement.scrollHeight});
  document.body.appendChild(pre);
});
</script>"""


@pytest.fixture(scope="module")
def chromium():
    binary = browser.find()
    if binary is None:
        if os.environ.get("CI_REQUIRE_BROWSER") == "1":
            pytest.fail("chromium is not installed (apt-get install chromium)")
        pytest.skip("chromium is not installed (apt-get install chromium); .ci/run installs it")
    return binary


@pytest.fixture(scope="module")
def page(tmp_path_factory):
    path = tmp_path_factory.mktemp("report") / "replan.html"
    path.write_text(replan_report(), encoding="utf-8")
    return path


class _Probe(html.parser.HTMLParser):
    def __init__(self):
        super().__init__()
        self.inside, self.text = False, ""

    def handle_starttag(self, tag, attrs):
        self.inside = self.inside or (tag == "pre" and ("id", "probe") in attrs)

    def handle_endtag(self, tag):
        if tag == "pre":
            self.inside = False

    def handle_data(self, data):
        if self.inside:
            self.text += data


def test_it_renders_and_every_image_loads(chromium, page, tmp_path):
    probed = tmp_path / "probed.html"
    probed.write_text(page.read_text(encoding="utf-8").replace("</body>", PROBE + "</body>"), encoding="utf-8")
    parser = _Probe()
    parser.feed(browser.dump_dom(chromium, probed))
    result = json.loads(parser.text)
    assert [i["id"] for i in result["images"]] == ["chart-channels", "chart-dominant", "chart-site", "chart-traffic"]
    for image in result["images"]:
        assert image["complete"] and image["width"] > 0 and image["height"] > 0, image
    assert {"charts", "plan", "figures", "compliance", "baselines", "inputs", "assumptions"} <= set(result["sections"])
    assert result["scrollHeight"] > 2000  # laid out as a long document, not an error page


def _near(pixels: np.ndarray, hex_colour: str, tolerance: int = 6) -> int:
    target = np.array([int(hex_colour[i:i + 2], 16) for i in (1, 3, 5)])
    return int((np.abs(pixels[..., :3].astype(int) - target).max(axis=-1) <= tolerance).sum())


def test_a_screenshot_is_not_blank(chromium, page, tmp_path):
    shot = browser.screenshot(chromium, page, tmp_path / "shot.png", 1280, 2400)
    pixels = (matplotlib.image.imread(shot)[..., :3] * 255).round().astype(np.uint8)
    assert pixels.shape[:2] == (2400, 1280)
    not_white = (pixels.min(axis=-1) < 245).mean()
    assert not_white > 0.05, not_white
    assert _near(pixels, "#fff4e5") > 10_000  # the cautions box is drawn
    # the channel map's shading shows: its hit bins' colours cover a visible area between them
    assert sum(_near(pixels, c) for c in HIT_COLOURS[1:]) > 2_000
