"""Rendering checks of corepace's HTML pages in a real browser (Debian's chromium).

Helpers for the browser tests: start the system chromium headless through
playwright (never a downloaded browser), load a page at a given width or as
printed, and measure what a reader would see:

* every table, figure and image fits the page, or sits in a box that
  scrolls sideways (on screen only: printed, nothing scrolls);
* no text is rendered smaller than :data:`MIN_TEXT_PX`, counting the text
  inside the plots: each plot carries the size of its smallest text in its
  own pixels (``data-min-font-px``) and is scaled by the width it is drawn
  at;
* the page as a whole never scrolls sideways.

The page is read from the ``file:`` URL; the network is never used.
"""

from __future__ import annotations

import os
import shutil
import tempfile
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path

import pytest

CHROMIUM = Path("/usr/bin/chromium")
"""Debian's chromium, installed by .ci/run and `make test` (apt-get install chromium)."""

CHROMIUM_ARGS = (
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
)

MIN_TEXT_PX = 9.0
"""Smallest text a reader should be given [CSS px]."""

DESKTOP = 1366
PHONE = 390
PRINT_WIDTH = 703
"""Printable width of an A4 page with the reports' 12 mm margins [CSS px]: 186 mm at 96/in."""


def require_chromium() -> Path:
    """The chromium executable, or a skip naming why it is missing.

    In CI (``CI`` set) a missing browser is a failure: .ci/run installs it.
    """
    if CHROMIUM.exists():
        return CHROMIUM
    reason = (
        f"{CHROMIUM} is missing and could not be installed here "
        "(`apt-get install -y chromium` needs root and Debian's package lists; "
        ".ci/run and `make test` try it)"
    )
    if os.environ.get("CI"):
        pytest.fail(reason)
    pytest.skip(reason)


@contextmanager
def browser() -> Iterator[object]:
    """A fresh headless chromium (own temporary profile), closed on exit.

    Yields a playwright browser context; pages are opened with :func:`open_page`.
    """
    from playwright.sync_api import sync_playwright

    executable = require_chromium()
    profile = tempfile.mkdtemp(prefix="corepace-chromium-")
    try:
        with sync_playwright() as pw:
            # the persistent context passes the fresh profile as --user-data-dir
            b = pw.chromium.launch_persistent_context(
                profile,
                executable_path=str(executable),
                headless=True,
                args=list(CHROMIUM_ARGS),
                offline=True,
            )
            try:
                yield b
            finally:
                b.close()
    finally:
        shutil.rmtree(profile, ignore_errors=True)


_MEASURE = """
(minTextPx) => {
  const vw = document.documentElement.clientWidth;
  const out = {vw, scrollWidth: document.documentElement.scrollWidth, wide: [], small: []};
  const scrolls = (el) => {
    for (let p = el.parentElement; p; p = p.parentElement) {
      const ox = getComputedStyle(p).overflowX;
      if (ox === 'auto' || ox === 'scroll') return p;
    }
    return null;
  };
  const name = (el) => {
    const t = el.closest('[data-table],[data-figure]');
    return el.tagName.toLowerCase() + (t ? ' ' + (t.dataset.table || t.dataset.figure) : '');
  };
  for (const el of document.querySelectorAll('table, img, figure, svg, pre')) {
    const r = el.getBoundingClientRect();
    if (r.width === 0 || el.getClientRects().length === 0) continue;
    const box = scrolls(el);
    const b = box ? box.getBoundingClientRect() : r;
    if (b.right > vw + 0.5 || b.left < -0.5) {
      out.wide.push(name(el) + ': ' + Math.round(b.left) + '..' + Math.round(b.right));
    }
  }
  const walker = document.createTreeWalker(document.body, NodeFilter.SHOW_TEXT);
  const seen = new Set();
  for (let n = walker.nextNode(); n; n = walker.nextNode()) {
    const el = n.parentElement;
    if (!n.textContent.trim() || seen.has(el)) continue;
    seen.add(el);
    if (el.getClientRects().length === 0) continue;
    const px = parseFloat(getComputedStyle(el).fontSize);
    if (px < minTextPx) out.small.push(el.tagName.toLowerCase() + ' ' + px + 'px: '
      + n.textContent.trim().slice(0, 40));
  }
  for (const img of document.querySelectorAll('img[data-min-font-px]')) {
    const r = img.getBoundingClientRect();
    if (r.width === 0 || !img.naturalWidth) continue;
    const px = parseFloat(img.dataset.minFontPx) * r.width / img.naturalWidth;
    if (px < minTextPx) out.small.push(name(img) + ' plot text ' + px.toFixed(1) + 'px');
  }
  return out;
}
"""


@dataclass(frozen=True)
class Layout:
    """What a page looks like at one width."""

    width: int
    scroll_width: int
    wide: tuple[str, ...]
    small: tuple[str, ...]


def open_page(b: object, path: Path, width: int, *, printed: bool = False) -> object:
    """A new page showing ``path`` at ``width`` CSS px (print media when ``printed``)."""
    page = b.new_page()
    page.set_viewport_size({"width": width, "height": 900})
    page.emulate_media(media="print" if printed else "screen")
    page.goto(path.resolve().as_uri())
    page.wait_for_load_state("load")
    return page


def measure(b: object, path: Path, width: int, *, printed: bool = False) -> Layout:
    """Load ``path`` at ``width`` CSS px (as printed when ``printed``) and measure it."""
    page = open_page(b, path, width, printed=printed)
    try:
        data = page.evaluate(_MEASURE, MIN_TEXT_PX)
    finally:
        page.close()
    return Layout(width, data["scrollWidth"], tuple(data["wide"]), tuple(data["small"]))


def pdf_pages(b: object, path: Path, out: Path) -> int:
    """Print ``path`` to a PDF at ``out`` (A4) and return its number of pages."""
    page = open_page(b, path, PRINT_WIDTH, printed=True)
    try:
        page.pdf(path=str(out), format="A4", prefer_css_page_size=True)
    finally:
        page.close()
    return out.read_bytes().count(b"/Type /Page") - out.read_bytes().count(b"/Type /Pages")


def screenshot(b: object, path: Path, out: Path, width: int) -> None:
    """A full-page PNG of ``path`` at ``width`` CSS px."""
    page = open_page(b, path, width)
    try:
        page.screenshot(path=str(out), full_page=True)
    finally:
        page.close()
