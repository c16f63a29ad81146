#!/usr/bin/env python3
"""Checks for scripts/ci-cohort-browser.sh (Python standard library only).

Reads the cohort page, the DOM headless Chromium dumped after the page's #selftest ran, and the
browser console log; exits non-zero with the list of what failed.
"""
import argparse
import html.parser
import json
import re
import sys


class Dom(html.parser.HTMLParser):
    """The self-test result, the table body rows and the embedding points of the dumped DOM."""

    def __init__(self):
        super().__init__()
        self.status = None
        self.selftest = {}
        self.rows = []  # data-i of each shown table row, in order
        self.in_tbody = False
        self.points = 0
        self.in_emb = False

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if a.get("id") == "selftest-result":
            self.status = a.get("data-status")
            self.selftest = a
        if tag == "tbody":
            self.in_tbody = True
        if tag == "tr" and self.in_tbody and "data-i" in a:
            self.rows.append(int(a["data-i"]))
        if tag == "svg" and a.get("id") == "emb":
            self.in_emb = True
        if tag == "circle" and self.in_emb:
            self.points += 1

    def handle_endtag(self, tag):
        if tag == "tbody":
            self.in_tbody = False
        if tag == "svg":
            self.in_emb = False


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--page", required=True)
    ap.add_argument("--dom", required=True)
    ap.add_argument("--console", required=True)
    args = ap.parse_args()
    failures = []
    page = open(args.page, encoding="utf-8").read()
    m = re.search(r'<script id="cohort-data" type="application/json">(.*?)</script>', page, re.S)
    if not m:
        print("cohort-browser-check: FAILED: no cohort-data in the page")
        return 1
    data = json.loads(m.group(1))
    cols = {c: i for i, c in enumerate(data["columns"])}
    rows = data["rows"]
    dom = Dom()
    dom.feed(open(args.dom, encoding="utf-8").read())
    if dom.status != "PASS":
        failures.append(f"page self-test status {dom.status!r}")
    want = dom.selftest.get("data-filter")
    expected = [i for i, r in enumerate(rows) if r[cols["verdict"]] == want]
    if not expected:
        failures.append(f"the filtered verdict {want!r} matches no record")
    if sorted(dom.rows) != sorted(expected[:1000]):
        failures.append(
            f"shown rows {len(dom.rows)} are not the {len(expected)} records with verdict {want!r}")
    hr = [rows[i][cols["mean_hr_bpm"]] for i in dom.rows]
    nums = [x for x in hr if x is not None]
    if nums != sorted(nums, reverse=True):
        failures.append("shown rows are not in descending heart rate")
    if any(x is not None for x in hr[len(nums):]) if nums else False:
        failures.append("empty heart rates are not last")
    placed = sum(1 for p in data["points"] if p is not None)
    if dom.points != placed or placed == 0:
        failures.append(f"embedding shows {dom.points} points, the page places {placed} records")
    if "Research use only" not in page:
        failures.append("no research-use notice")
    if re.search(r'(src|href)="(https?:)?//', page):
        failures.append("the page loads something from outside")
    console = [l for l in open(args.console, encoding="utf-8", errors="replace")
               if "CONSOLE" in l or "Uncaught" in l]
    if console:
        failures.append("console output: " + " | ".join(l.strip() for l in console[:3]))
    if failures:
        print("cohort-browser-check: FAILED:\n  " + "\n  ".join(failures))
        return 1
    print(f"cohort-browser-check: self-test PASS; {len(dom.rows)} rows with verdict {want!r} "
          f"in descending heart rate; {dom.points} embedding points")
    return 0


if __name__ == "__main__":
    sys.exit(main())
