#!/usr/bin/env python3
"""What a reader of the HTML report sees, checked on the DOM Chromium rendered.

    domcheck.py plots DOM PLOT[,PLOT...]     every capture section holds each named plot, and
                                             every plot's data marks are drawn (not a legend alone)
    domcheck.py summary DOM JSONL            the summary table's true PF and phase angle match the
                                             JSON Lines of `tracephase analyze` for the same files
    domcheck.py netlog NETLOG                Chromium's network log fetched nothing but the page
    domcheck.py only HTML SECTION_ID OUT     writes the page with only that section in its body
                                             (same styles), for the README picture

Standard library only. Exits 1 with one line per problem.
"""

import json
import re
import sys
from html.parser import HTMLParser

# The plots' series colours (src/report/plot/mod.rs `palette`): voltage, current, accent,
# histogram, band, pass, unsure. Grid, ink, muted, paper and limit lines are not data.
DATA_COLOURS = {"#1F5F7A", "#C45A1C", "#7B4B94", "#8EA4BC", "#F3E3B5", "#2E7D4F", "#9A6200"}
# A series drawn only as its legend swatch spans a few per cent of the plot; real data more.
MIN_SPAN = 0.08
# A waveform's traces are long polylines in the voltage and current colours; its zero-crossing
# ticks alone would span the plot too, so the traces are asked for by their length.
TRACE_COLOURS = ("#1F5F7A", "#C45A1C")
MIN_TRACE_POINTS = 20


class Dom(HTMLParser):
    """Capture sections, the figures in them, and each figure's data marks."""

    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.sections = {}  # section id -> list of figures
        self.section = None
        self.figure = None  # {"kind", "width", "height", "marks": {colour: [xs, ys]}}
        self.table_rows = []  # summary table rows: list of cell texts
        self.in_summary = False
        self.row = None
        self.cell = None

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == "section":
            self.section = a.get("id")
            self.in_summary = self.section == "summary"
            if self.section and self.section.startswith("capture-"):
                self.sections[self.section] = []
        elif tag == "figure":
            kind = (a.get("class") or "").removeprefix("plot-") or "figure"
            self.figure = {"kind": kind, "width": 0.0, "height": 0.0, "marks": {}, "longest": {}}
            if self.section in self.sections:
                self.sections[self.section].append(self.figure)
        elif tag == "svg" and self.figure is not None:
            self.figure["width"] = float(a.get("width", "0").removesuffix("px") or 0)
            self.figure["height"] = float(a.get("height", "0").removesuffix("px") or 0)
        elif self.figure is not None and tag in ("polyline", "polygon", "rect", "circle", "line"):
            colour = (a.get("stroke") or a.get("fill") or "").upper()
            if a.get("fill", "none").upper() in DATA_COLOURS:
                colour = a["fill"].upper()
            if colour not in DATA_COLOURS:
                return
            xs, ys = self.figure["marks"].setdefault(colour, ([], []))
            corners = list(points(tag, a))
            for x, y in corners:
                xs.append(x)
                ys.append(y)
            longest = self.figure["longest"]
            longest[colour] = max(longest.get(colour, 0), len(corners))
        elif self.in_summary and tag == "tr":
            self.row = []
        elif self.row is not None and tag in ("td", "th"):
            self.cell = ""

    def handle_endtag(self, tag):
        if tag == "figure":
            self.figure = None
        elif tag == "section":
            self.section = None
            self.in_summary = False
        elif tag in ("td", "th") and self.row is not None and self.cell is not None:
            self.row.append(self.cell.strip())
            self.cell = None
        elif tag == "tr" and self.row is not None:
            self.table_rows.append(self.row)
            self.row = None

    def handle_data(self, data):
        if self.cell is not None:
            self.cell += data


def points(tag, a):
    """The corners of one SVG mark, in user units."""
    f = lambda k: float(a.get(k, "0"))
    if tag in ("polyline", "polygon"):
        for pair in a.get("points", "").split():
            x, _, y = pair.partition(",")
            yield float(x), float(y)
    elif tag == "rect":
        yield f("x"), f("y")
        yield f("x") + f("width"), f("y") + f("height")
    elif tag == "circle":
        yield f("cx") - f("r"), f("cy") - f("r")
        yield f("cx") + f("r"), f("cy") + f("r")
    elif tag == "line":
        yield f("x1"), f("y1")
        yield f("x2"), f("y2")


def parse(path):
    dom = Dom()
    with open(path, encoding="utf-8") as fh:
        dom.feed(fh.read())
    return dom


def check_plots(dom_path, wanted):
    dom = parse(dom_path)
    problems = []
    if not dom.sections:
        problems.append(f"{dom_path}: no capture sections")
    for sid, figures in dom.sections.items():
        kinds = [f["kind"] for f in figures]
        for w in wanted:
            if w not in kinds:
                problems.append(f"{sid}: the {w} plot is missing (plots: {', '.join(kinds) or 'none'})")
        for fig in figures:
            w, h = fig["width"], fig["height"]
            if not fig["marks"]:
                problems.append(f"{sid}: the {fig['kind']} plot draws no data")
            if fig["kind"] == "waveform":
                for colour in TRACE_COLOURS:
                    if fig["longest"].get(colour, 0) < MIN_TRACE_POINTS:
                        problems.append(f"{sid}: the waveform plot has no {colour} trace")
            for colour, (xs, ys) in fig["marks"].items():
                span = max((max(xs) - min(xs)) / w, (max(ys) - min(ys)) / h) if w and h else 0
                if span < MIN_SPAN:
                    problems.append(
                        f"{sid}: the {fig['kind']} plot's {colour} series spans {span:.1%} "
                        "of the plot: only a legend swatch, no data"
                    )
    print(f"   plots: {sum(len(f) for f in dom.sections.values())} in {len(dom.sections)} "
          f"capture sections checked for their data")
    return problems


VALUE_PM = re.compile(r"^\s*(-?[0-9.]+)\s*±\s*([0-9.]+)")


def shown_matches(cell, value, u, what):
    """`cell` ("0.8499 ± 0.0053") shows `value` and `u` to its own last digit."""
    m = VALUE_PM.match(cell)
    if not m:
        return f"{what}: '{cell}' is not 'value ± U'"
    v_text, u_text = m.groups()
    step = 10.0 ** -(len(v_text.partition(".")[2]))
    if abs(float(v_text) - value) > 0.5 * step + 1e-12:
        return f"{what}: shows {v_text}, the JSON has {value}"
    # U is rounded to its shown digit, and never shown below the computed value by more than that
    if abs(float(u_text) - u) > step + 1e-12 and float(u_text) < u:
        return f"{what}: shows ± {u_text}, the JSON has ± {u}"
    return None


def check_summary(dom_path, jsonl_path):
    dom = parse(dom_path)
    records = {}
    with open(jsonl_path, encoding="utf-8") as fh:
        for line in fh:
            if line.strip():
                r = json.loads(line)
                records[r["file"]] = r
    header = next((r for r in dom.table_rows if r and r[0] == "file" and "true PF" in r), None)
    if header is None:
        return [f"{dom_path}: no summary table with a true PF column"]
    col_pf, col_angle = header.index("true PF"), header.index("phase angle (°)")
    problems, seen = [], 0
    for row in dom.table_rows:
        if len(row) != len(header) or row[0] not in records:
            continue
        seen += 1
        r = records[row[0]]
        for col, value, u, what in (
            (col_pf, r["true_pf"], r["uncertainty"]["true_pf"], "true PF"),
            (col_angle, r["phase_angle_deg"]["dft"], r["uncertainty"]["phase_angle_deg"]["dft"],
             "phase angle"),
        ):
            p = shown_matches(row[col], value, u, f"{row[0]}: summary {what}")
            if p:
                problems.append(p)
    if seen != len(records):
        problems.append(f"{dom_path}: the summary shows {seen} of the {len(records)} analysed files")
    print(f"   summary: {seen} rows match the JSON of the same captures")
    return problems


def check_netlog(path):
    """Nothing the page asked for left the machine: every request started on behalf of the page
    (its network partition is the page's file:// site) is for the page itself or inline data.

    The browser's own background requests (updates, time, spelling lists) carry no page
    partition; they are not the report's doing and the script's host rules block them anyway.
    """
    with open(path, encoding="utf-8", errors="replace") as fh:
        text = fh.read()
    try:
        log = json.loads(text)
    except json.JSONDecodeError:
        # a log cut short by the browser's exit lacks its closing brackets
        log = json.loads(text.rstrip().rstrip(",") + "]}")
    names = {v: k for k, v in log["constants"]["logEventTypes"].items()}
    page, other = [], 0
    for event in log.get("events", []):
        p = event.get("params") or {}
        if names.get(event.get("type")) != "URL_REQUEST_START_JOB" or "url" not in p:
            continue
        partition = f"{p.get('network_isolation_key', '')} {p.get('site_for_cookies', '')}"
        if "file://" in partition or p.get("initiator") == "null":
            page.append(p["url"])
        else:
            other += 1
    bad = sorted({u for u in page if not u.startswith(("file:", "data:"))})
    print(f"   network log: {len(page)} requests by the page, {len(bad)} of them outside it "
          f"({other} of the browser's own, blocked)")
    return [f"{path}: the page fetched {u}" for u in bad]


def only_section(html_path, section_id, out_path):
    with open(html_path, encoding="utf-8") as fh:
        page = fh.read()
    start = page.find(f'<section id="{section_id}"')
    end = page.find("</section>", start)
    body = page.find("<body")
    if start < 0 or end < 0 or body < 0:
        return [f"{html_path}: no section {section_id}"]
    body_open = page.find(">", body) + 1
    with open(out_path, "w", encoding="utf-8") as fh:
        fh.write(page[:body_open] + "<main>" + page[start : end + len("</section>")] + "</main></body></html>\n")
    return []


def main(argv):
    if len(argv) < 3:
        print(__doc__, file=sys.stderr)
        return 2
    mode = argv[1]
    if mode == "plots" and len(argv) == 4:
        problems = check_plots(argv[2], [w for w in argv[3].split(",") if w])
    elif mode == "summary" and len(argv) == 4:
        problems = check_summary(argv[2], argv[3])
    elif mode == "only" and len(argv) == 5:
        problems = only_section(argv[2], argv[3], argv[4])
    elif mode == "netlog" and len(argv) == 3:
        problems = check_netlog(argv[2])
    else:
        print(__doc__, file=sys.stderr)
        return 2
    for p in problems:
        print(f"error: {p}", file=sys.stderr)
    return 1 if problems else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
