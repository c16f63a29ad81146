#!/usr/bin/env python3
"""Checks for scripts/browser-check.sh (Python standard library only).

Reads the DOM that headless Chromium dumped after the report's #selftest ran, the browser's
console log, the report file itself and the screenshot, and exits non-zero with a list of what
failed.
"""
import argparse
import html.parser
import re
import sys


class Dom(html.parser.HTMLParser):
    """Collects what the checks need from the dumped DOM."""

    def __init__(self):
        super().__init__()
        self.title = ""
        self.in_title = False
        self.data_figures = None
        self.figures = []  # ids of <figure class="bf-figure">
        self.figure_svgs = 0
        self.in_figure = 0
        self.selftest_status = None
        self.selftest_text = ""
        self.in_selftest = False
        self.wave_points = ""
        self.info = ""
        self.in_info = False

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == "title":
            self.in_title = True
        if tag == "body":
            self.data_figures = a.get("data-figures")
        if tag == "figure" and "bf-figure" in (a.get("class") or ""):
            self.figures.append(a.get("id"))
            self.in_figure += 1
        if tag == "svg" and self.in_figure:
            self.figure_svgs += 1
        if a.get("id") == "selftest-result":
            self.selftest_status = a.get("data-status")
            self.in_selftest = True
        if a.get("id") == "bf-wave-line":
            self.wave_points = a.get("points") or ""
        if a.get("id") == "bf-info":
            self.in_info = True

    def handle_endtag(self, tag):
        if tag == "title":
            self.in_title = False
        if tag == "figure" and self.in_figure:
            self.in_figure -= 1
        if tag == "div":
            self.in_selftest = False
        if tag == "p":
            self.in_info = False

    def handle_data(self, data):
        if self.in_title:
            self.title += data
        if self.in_selftest:
            self.selftest_text += data
        if self.in_info:
            self.info += data


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--report", required=True)
    ap.add_argument("--dom", required=True)
    ap.add_argument("--console", required=True)
    ap.add_argument("--screenshot", required=True)
    args = ap.parse_args()

    failures = []
    dom = Dom()
    with open(args.dom, encoding="utf-8") as f:
        dom.feed(f.read())

    print(f"self-check: {dom.selftest_text.strip()}")
    if dom.selftest_status != "pass":
        failures.append(f"page self-check status is {dom.selftest_status!r}, not 'pass'")
    if not dom.title.startswith("SELFTEST PASS"):
        failures.append(f"page title is {dom.title[:80]!r}")

    want = int(dom.data_figures or 0)
    print(f"figures: {len(dom.figures)} present ({', '.join(map(str, dom.figures))}), "
          f"{dom.figure_svgs} inline SVG, {want} expected")
    if want < 1 or len(dom.figures) != want or dom.figure_svgs != want:
        failures.append("figures missing or without their SVG drawing")

    n_points = len(dom.wave_points.split())
    print(f"waveform after the click: {n_points} points; info line: {dom.info.strip()}")
    if n_points < 10:
        failures.append("no beat waveform shown after clicking a point")
    if "t = " not in dom.info:
        failures.append("the beat's time is not shown")

    console = []
    with open(args.console, encoding="utf-8", errors="replace") as f:
        for line in f:
            if "CONSOLE" in line or "Uncaught" in line:
                console.append(line.strip())
    print(f"console lines: {len(console)}")
    if console:
        failures.append("browser console is not silent:\n  " + "\n  ".join(console[:10]))

    with open(args.report, encoding="utf-8") as f:
        page = f.read()
    external = re.findall(
        r'(?:src|href)\s*=\s*"(?:https?:)?//|<link\b|@import|url\(\s*["\']?(?:https?:)?//', page)
    if external:
        failures.append(f"page references outside resources: {external[:5]}")

    with open(args.screenshot, "rb") as f:
        head = f.read(24)
    # Source: PNG specification (ISO/IEC 15948): 8-byte signature, then the IHDR chunk.
    if head[:8] != b"\x89PNG\r\n\x1a\n":
        failures.append("screenshot is not a PNG file")
    else:
        w = int.from_bytes(head[16:20], "big")
        h = int.from_bytes(head[20:24], "big")
        print(f"screenshot: {w} x {h} px")

    if failures:
        print("browser-check: FAILED", file=sys.stderr)
        for m in failures:
            print(f"  - {m}", file=sys.stderr)
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main())
