#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
"""The HTML reports, checked by a real browser and against the program's own JSON.

Usage: reports_check.py BANDGAP DB RUN_HTML LOT_HTML TABLE_HTML TABLE_JSON OUTDIR

Each report is loaded in Debian's Chromium (headless, driven through chromedriver's W3C
WebDriver protocol with the standard library's urllib): rendered to PNG, printed to PDF on A4
and on Letter, and read back as the DOM.  Checked: every chart is there with its plotted
points (counted against the readings, probes and codes they stand for, from the program's
JSON), no request leaves the file (the performance log shows only the file itself), and the
console holds no errors.  Every SVG is well-formed XML (xmllint from libxml2-utils).  The
numbers the report shows carry their full value in data-v; they must equal those of `show`,
`curve`, `export`, `drift` and `lut --format json` for the same data, and the residuals equal
T_ref - T(R) recomputed here with numpy from the Steinhart-Hart equation (Steinhart & Hart
1968, the fitted model).  Prints "ok NAME" / "not ok NAME" lines."""
import base64, json, os, re, subprocess, sys, zlib
from html.parser import HTMLParser
from webdriver import Browser
import numpy as np
from scipy import constants, stats

bandgap, db, run_html, lot_html, table_html, table_json, outdir = sys.argv[1:8]
fails = 0


def check(name, cond, detail=""):
    global fails
    print(("ok " if cond else "not ok ") + name + ("" if cond else ": " + detail))
    fails += 0 if cond else 1


def bg(*args):
    return json.loads(subprocess.run([bandgap, "--db", db, *args], check=True,
                                     capture_output=True, text=True).stdout)


class Numbers(HTMLParser):
    """data-v values by class, in document order, inside elements with an id."""

    def __init__(self):
        super().__init__()
        self.stack, self.vals, self.svgs, self.depth = [], [], [], 0

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if "id" in a:
            self.stack.append((self.depth, a["id"]))
        if "data-v" in a:
            where = self.stack[-1][1] if self.stack else ""
            self.vals.append((where, a.get("class", ""), float(a["data-v"])))
        self.depth += 1

    def handle_endtag(self, tag):
        self.depth -= 1
        while self.stack and self.stack[-1][0] >= self.depth:
            self.stack.pop()


def numbers(path, where, cls):
    p = Numbers()
    p.feed(open(path, encoding="utf-8").read())
    return [v for w, c, v in p.vals if w == where and cls in c.split()]


# ---- well-formed SVG -------------------------------------------------------------------------
for path in (run_html, lot_html, table_html):
    text = open(path, encoding="utf-8").read()
    svgs = re.findall(r"<svg.*?</svg>", text, re.S)
    ok = len(svgs) > 0
    for s in svgs:
        r = subprocess.run(["xmllint", "--noout", "-"], input=s, text=True, capture_output=True)
        ok = ok and r.returncode == 0
    check("svg well-formed (xmllint): " + os.path.basename(path), ok)
    check("no external reference: " + os.path.basename(path),
          not re.search(r"(src|href)\s*=\s*[\"'](?!#|data:)", text)
          and "Content-Security-Policy" in text)

# ---- the browser -----------------------------------------------------------------------------
browser = Browser(["--window-size=900,1400"], {"browser": "ALL", "performance": "ALL"})
wd = browser.wd
sid = browser.sid

JS = """
const out = {};
document.querySelectorAll('svg[data-chart]').forEach(s => {
  const line = s.querySelector('polyline.series');
  out[s.dataset.chart] = {
    points: s.querySelectorAll('.pt').length,
    flagged: s.querySelectorAll('.pt.flag').length,
    bars: Array.from(s.querySelectorAll('rect.bar')).map(b => +b.dataset.count),
    vertices: line ? line.points.numberOfItems : 0,
    bands: s.querySelector('polygon.envelope') ? +s.querySelector('polygon.envelope').dataset.bands : 0,
    envelope_vertices: s.querySelector('polygon.envelope') ?
        s.querySelector('polygon.envelope').points.numberOfItems : 0,
    limits: s.querySelectorAll('line.limit').length,
    width: s.getBoundingClientRect().width };
});
return { charts: out, cautions: !!document.getElementById('cautions'),
         title: document.title, html: document.documentElement.outerHTML.length };
"""


def pdf_pages_text(pdf):
    """The text of each page of a PDF as Chromium (Skia) writes it: objects with Flate
    streams, Type0 fonts with ToUnicode CMaps (PDF 32000-1:2008, 9.10.3), text shown with
    Tj/TJ in hex strings (7.3.4.3), pages in the order of the page tree (7.7.3)."""
    # Objects in file order; a stream is skipped by its /Length (7.3.8.1), since its bytes
    # may hold "endobj" or "endstream" by chance.
    objs, pos = {}, 0
    obj_rx, kw_rx = re.compile(rb"(\d+) 0 obj"), re.compile(rb"stream\r?\n|endobj")
    while (m := obj_rx.search(pdf, pos)):
        k = kw_rx.search(pdf, m.end())
        if not k:
            break
        end = k.start()
        ln = re.search(rb"/Length (\d+)(?! \d+ R)", pdf[m.end():k.start()])
        if k.group(0).startswith(b"stream") and ln:
            end = pdf.index(b"endobj", k.end() + int(ln.group(1)))
        elif k.group(0).startswith(b"stream"):
            end = pdf.index(b"endobj", k.end())
        objs[int(m.group(1))] = pdf[m.end():end]
        pos = end + 6

    def stream(n):
        b = objs[n]
        m = re.search(rb"stream\r?\n", b)
        ln = re.search(rb"/Length (\d+)(?! \d+ R)", b[:m.start()])
        data = b[m.end():m.end() + int(ln.group(1))] if ln else \
            re.search(rb"(.*?)\r?\nendstream", b[m.end():], re.S).group(1)
        return zlib.decompress(data) if b"/FlateDecode" in b[:m.start()] else data

    def cmap(n):
        out = {}
        text = stream(n)
        for blk in re.findall(rb"beginbfchar(.*?)endbfchar", text, re.S):
            for a, b in re.findall(rb"<([0-9a-fA-F]+)>\s*<([0-9a-fA-F]+)>", blk):
                out[int(a, 16)] = bytes.fromhex(b.decode()).decode("utf-16-be", "replace")
        for blk in re.findall(rb"beginbfrange(.*?)endbfrange", text, re.S):
            for a, b, c in re.findall(rb"<([0-9a-fA-F]+)>\s*<([0-9a-fA-F]+)>\s*<([0-9a-fA-F]+)>",
                                      blk):
                base = int(c, 16)
                for k in range(int(a, 16), int(b, 16) + 1):
                    out[k] = chr(base + k - int(a, 16))
        return out

    def pages(n):
        b = objs[n]
        if re.search(rb"/Type\s*/Pages", b):
            kids = re.search(rb"/Kids\s*\[(.*?)\]", b, re.S).group(1)
            return [p for k in re.findall(rb"(\d+) 0 R", kids) for p in pages(int(k))]
        return [n]

    root = int(re.search(rb"/Root (\d+) 0 R", pdf).group(1))
    top = int(re.search(rb"/Pages (\d+) 0 R", objs[root]).group(1))
    result = []
    for p in pages(top):
        b = objs[p]
        fonts = {}
        fd = re.search(rb"/Font\s*<<(.*?)>>", b, re.S)
        for name, ref in re.findall(rb"/(\w+) (\d+) 0 R", fd.group(1) if fd else b""):
            tu = re.search(rb"/ToUnicode (\d+) 0 R", objs[int(ref)])
            fonts[name] = cmap(int(tu.group(1))) if tu else {}
        cs = re.search(rb"/Contents\s*(\[.*?\]|\d+ 0 R)", b, re.S).group(1)
        text, font = [], {}
        for n in re.findall(rb"(\d+) 0 R", cs):
            for m in re.finditer(rb"/(\w+)\s+[-\d.]+\s+Tf|(\[(?:[^\]]*)\])\s*TJ|<([0-9a-fA-F]*)>\s*Tj",
                                 stream(int(n))):
                if m.group(1):
                    font = fonts.get(m.group(1), {})
                    continue
                hexes = re.findall(rb"<([0-9a-fA-F]*)>", m.group(2)) if m.group(2) else [m.group(3)]
                s = ""
                for h in hexes:
                    raw = bytes.fromhex(h.decode())
                    s += "".join(font.get(int.from_bytes(raw[i:i + 2], "big"), "?")
                                 for i in range(0, len(raw) - 1, 2))
                text.append(s)
        result.append(" ".join(text))
    return result


def squash(text):
    """Text without white space and with the ligatures a PDF may hold spelled out."""
    for lig, letters in (("\ufb01", "fi"), ("\ufb02", "fl"), ("\ufb00", "ff"), ("\ufb03", "ffi"),
                         ("\ufb04", "ffl")):
        text = text.replace(lig, letters)
    return re.sub(r"\s+", "", text)


def pdf_checks(name, paper, pdf, html_path, closing):
    """Every printed page carries the report's identifier and "page n of m" (CSS margin
    boxes); the last page holds more than the running head, the cautions and the closing
    note."""
    text = open(html_path, encoding="utf-8").read()
    rid = re.search(r'@top-right \{ content: "([^"]*)"', text)
    pages = [squash(t) for t in pdf_pages_text(pdf)]
    ok = rid is not None and len(pages) > 0
    for i, t in enumerate(pages):
        ok = ok and squash(rid.group(1)) in t and ("page%dof%d" % (i + 1, len(pages))) in t
    check("%s: %s: report identifier and page n of m on every page" % (name, paper), ok,
          rid.group(1) if rid else "no @top-right")
    last = pages[-1] if pages else ""
    for part in [rid.group(1) if rid else "", "page%dof%d" % (len(pages), len(pages))] + closing:
        last = last.replace(squash(part), "", 1)
    head = re.search(r'@top-left \{ content: "([^"]*)"', text)
    if head:
        last = last.replace(squash(head.group(1)), "", 1)
    check("%s: %s: the last page holds more than the closing" % (name, paper), len(last) > 40,
          last[:200])


def png_ok(data):
    """A PNG with more than one colour in its first rows (decoded here with zlib)."""
    if data[:8] != b"\x89PNG\r\n\x1a\n":
        return False
    pos, idat, w = 8, b"", 0
    while pos < len(data):
        n = int.from_bytes(data[pos:pos + 4], "big")
        kind = data[pos + 4:pos + 8]
        if kind == b"IHDR":
            w = int.from_bytes(data[pos + 8:pos + 12], "big")
        if kind == b"IDAT":
            idat += data[pos + 8:pos + 8 + n]
        pos += 12 + n
    raw = zlib.decompress(idat)
    return w > 0 and len(set(raw[:200000])) > 2


def load(path, name):
    url = "file://" + os.path.abspath(path)
    wd("POST", "/session/%s/se/log" % sid, {"type": "browser"})  # clear
    wd("POST", "/session/%s/se/log" % sid, {"type": "performance"})
    wd("POST", "/session/%s/url" % sid, {"url": url})
    info = wd("POST", "/session/%s/execute/sync" % sid, {"script": JS, "args": []})
    png = base64.b64decode(wd("GET", "/session/%s/screenshot" % sid))
    open(os.path.join(outdir, name + ".png"), "wb").write(png)
    dom = wd("POST", "/session/%s/execute/sync" % sid,
             {"script": "return document.documentElement.outerHTML;", "args": []})
    open(os.path.join(outdir, name + ".dom.html"), "w").write(dom)
    check(name + ": renders to PNG", png_ok(png))
    check(name + ": DOM read back", len(dom) > 1000 and info["cautions"])
    closing = wd("POST", "/session/%s/execute/sync" % sid, {"script": (
        "return ['cautions', 'closing-note'].map(i => document.getElementById(i))"
        ".filter(e => e).map(e => e.textContent);"), "args": []})
    for paper, (w, h) in (("A4", (21.0, 29.7)), ("Letter", (21.59, 27.94))):
        pdf = base64.b64decode(wd("POST", "/session/%s/print" % sid, {
            "page": {"width": w, "height": h}, "margin": {"top": 1.4, "bottom": 1.4,
                                                           "left": 1.5, "right": 1.5}}))
        open(os.path.join(outdir, "%s.%s.pdf" % (name, paper)), "wb").write(pdf)
        pages = len(re.findall(rb"/Type\s*/Page[^s]", pdf))
        check("%s: prints on %s (%d pages)" % (name, paper, pages),
              pdf[:5] == b"%PDF-" and 1 <= pages <= 12)
        pdf_checks(name, paper, pdf, path, closing)
    logs = wd("POST", "/session/%s/se/log" % sid, {"type": "browser"})
    errors = [e for e in logs if e.get("level") == "SEVERE"]
    check(name + ": no console errors", not errors, json.dumps(errors)[:300])
    perf = wd("POST", "/session/%s/se/log" % sid, {"type": "performance"})
    urls = set()
    for e in perf:
        m = json.loads(e["message"])["message"]
        if m.get("method") == "Network.requestWillBeSent":
            urls.add(m["params"]["request"]["url"])
    check(name + ": no request leaves the file", urls <= {url} and url in urls or not urls,
          " ".join(sorted(urls)))
    return info["charts"]


def checks():
    # ---- the calibration report ------------------------------------------------------------------
    charts = load(run_html, "run")
    run_id = int(re.search(r'"run":(\d+)', open(run_html).read()).group(1)) if False else None
    fit_id = int(re.search(r"from fit (\d+) of run (\d+)", open(run_html).read()).group(1))
    run_no = int(re.search(r"from fit (\d+) of run (\d+)", open(run_html).read()).group(2))
    fit = bg("show", "fit", str(fit_id), "--json")
    serial = fit["probe"]
    exp = bg("export", "--probe", serial, "--json")["probes"][0]
    run = [r for r in exp["runs"] if r["run"] == run_no][0]
    readings = run["readings"]
    check("run: residual chart has one point per reading",
          charts.get("residuals", {}).get("points") == len(readings),
          "%s vs %d" % (charts.get("residuals"), len(readings)))
    check("run: excluded readings flagged",
          charts["residuals"]["flagged"] == sum(1 for r in readings if r["excluded"]))
    coef = numbers(run_html, "coefficients", "coef")
    check("run: coefficients equal show fit --json", coef == fit["coefficients"])
    u = numbers(run_html, "coefficients", "u")
    cov = np.array(fit["covariance"])
    check("run: standard uncertainties are sqrt(diag(cov))",
          np.allclose(u, np.sqrt(np.diag(cov)), rtol=1e-15, atol=0))
    check("run: RMS and max residual equal show",
          numbers(run_html, "fitstats", "rms") == [fit["rms_mk"]] and
          numbers(run_html, "fitstats", "maxabs") == [fit["max_abs_mk"]])
    check("run: validity range equals the fit's",
          np.isclose(numbers(run_html, "uncertainty", "tmin")[0], fit["range"]["t_min_k"] - 273.15,
                     rtol=0, atol=1e-12) and
          np.isclose(numbers(run_html, "uncertainty", "tmax")[0], fit["range"]["t_max_k"] - 273.15,
                     rtol=0, atol=1e-12))
    t_rep = numbers(run_html, "readings", "t")
    r_rep = numbers(run_html, "readings", "r")
    check("run: readings equal export --json",
          np.allclose(t_rep, [g["t_k"] - 273.15 for g in readings], rtol=0, atol=1e-9) and
          r_rep == [g["ohms"] for g in readings])
    # residuals recomputed here: T(R) from 1/T = A + B ln R + C ln^3 R (Steinhart & Hart 1968)
    if fit["model"] == "sh3":
        A, B, C = fit["coefficients"]
        L = np.log(np.array(r_rep))
        t_fit = 1.0 / (A + B * L + C * L ** 3)
        res = 1e3 * (np.array([g["t_k"] for g in readings]) - t_fit)
        check("run: residuals equal T_ref - T(R) (numpy)",
              np.allclose(numbers(run_html, "readings", "resid"), res, rtol=0, atol=1e-6))
    rt = re.search(r'id="rt" data-from="([^"]+)" data-to="([^"]+)" data-step="([^"]+)"',
                   open(run_html).read())
    t_rows = numbers(run_html, "rt", "t")
    cur = [bg("curve", "--fit", str(fit_id), "--from", "%.17gK" % (t + 273.15), "--to",
              "%.17gK" % (t + 273.15), "--step", "1K", "--json")["rows"][0] for t in t_rows]
    check("run: R-T table equals curve --json (R, alpha, U)",
          np.allclose(numbers(run_html, "rt", "r"), [c["ohms"] for c in cur], rtol=1e-13,
                      atol=0) and
          np.allclose(numbers(run_html, "rt", "alpha"), [100 * c["alpha_per_k"] for c in cur],
                      rtol=1e-12, atol=0) and
          np.allclose(numbers(run_html, "rt", "U"), [1e3 * c["U_k"] for c in cur],
                      rtol=1e-12, atol=0))
    step = float(rt.group(3))
    check("run: R-T table runs over the validity range end to end",
          np.isclose(t_rows[0], fit["range"]["t_min_k"] - 273.15, rtol=0, atol=1e-12) and
          np.isclose(t_rows[-1], fit["range"]["t_max_k"] - 273.15, rtol=0, atol=1e-12) and
          all(abs(t / step - round(t / step)) < 1e-9 for t in t_rows[1:-1]) and
          all(b > a for a, b in zip(t_rows, t_rows[1:])), str(t_rows))
    # self-heating: I^2 R at the largest resistance read, over the dissipation constant given
    current = run["measuring_current_a"]  # stored as a number in A (schema 4)
    p_uw = 1e6 * current ** 2 * max(g["ohms"] for g in readings)
    diss = float(re.search(r"over ([0-9.]+) mW/K", open(run_html).read()).group(1)) * 1e-3
    check("run: self-heating estimate is I^2 R_max over the dissipation constant",
          np.isclose(numbers(run_html, "selfheat", "power-uw")[0], p_uw, rtol=1e-12) and
          np.isclose(numbers(run_html, "selfheat", "selfheat-mk")[0], 1e-3 * p_uw / diss,
                     rtol=1e-12))
    # U = k u with k from Student's t for the fit's degrees of freedom at 95.45 % (scipy), as
    # fit and curve state it (JCGM 100:2008, G.3)
    check("run: k from Student t for the fit's dof at 95.45 % (scipy), as curve --json",
          np.isclose(numbers(run_html, "uncertainty", "k")[0],
                     stats.t.ppf(0.5 + 0.9545 / 2, fit["dof"]), rtol=1e-9) and
          np.isclose(numbers(run_html, "uncertainty", "coverage")[0], 95.45, rtol=1e-12))
    U = numbers(run_html, "uncertainty", "U")[0]
    grid = bg("curve", "--fit", str(fit_id), "--from", "%.17gC" % (fit["range"]["t_min_k"] - 273.15),
              "--to", "%.17gC" % (fit["range"]["t_max_k"] - 273.15),
              "--step", "%.17gK" % ((fit["range"]["t_max_k"] - fit["range"]["t_min_k"]) / 40), "--json")["rows"]
    umax = 1e3 * max(c["U_k"] for c in grid)
    check("run: stated U is the largest U = k u rounded up to two significant digits",
          U >= umax * (1 - 1e-12) and U <= umax * 1.11 and abs(float("%.2g" % U) - U) <= 1e-12 * U,
          "%g vs %g" % (U, umax))

    # ---- the lot report --------------------------------------------------------------------------
    charts = load(lot_html, "lot")
    code = re.search(r"<th>Lot</th><td>([^<]+)</td>", open(lot_html).read()).group(1)
    dr = bg("drift", "--lot", code, "--json") if True else None
    check("lot: histogram counts every probe", sum(charts.get("histogram", {}).get("bars", [])) ==
          len(dr["probes"]))
    check("lot: per-probe numbers equal drift --lot --json",
          numbers(lot_html, "probes", "r25dev") == [p["r25_dev_pct"] for p in dr["probes"]] and
          numbers(lot_html, "probes", "b") == [p["b_k"] for p in dr["probes"]] and
          numbers(lot_html, "probes", "maxdev") ==
          [max(abs(x) for x in p["deviation_mk"]) for p in dr["probes"]])
    check("lot: statistics equal drift --lot --json",
          numbers(lot_html, "stats", "mean") == [dr["r25_dev_pct"]["mean"], dr["b_k"]["mean"]] and
          numbers(lot_html, "stats", "sd") == [dr["r25_dev_pct"]["sd"], dr["b_k"]["sd"]] and
          numbers(lot_html, "stats", "cpk") == [dr["r25_dev_pct"]["cpk"], dr["b_k"]["cpk"]])
    check("lot: statistics equal numpy on the same values",
          np.isclose(np.mean([p["b_k"] for p in dr["probes"]]), dr["b_k"]["mean"], rtol=1e-14) and
          np.isclose(np.std([p["b_k"] for p in dr["probes"]], ddof=1), dr["b_k"]["sd"], rtol=1e-12))
    # E = k B with k the Boltzmann constant in eV/K (CODATA, through scipy.constants)
    k_ev = constants.physical_constants["Boltzmann constant in eV/K"][0]
    check("lot: activation energy is k times the mean B (CODATA k)",
          np.isclose(numbers(lot_html, "energy", "ea")[0], k_ev * dr["b_k"]["mean"],
                     rtol=1e-6))
    check("lot: Grubbs statistics and band equal drift",
          numbers(lot_html, "grubbs", "g_r25") == [dr["grubbs"]["g_r25"]] and
          numbers(lot_html, "band", "blo") == dr["band_lo_mk"] and
          numbers(lot_html, "band", "bhi") == dr["band_hi_mk"])
    part = dr["part"]
    pj = subprocess.run([bandgap, "--db", db, "drift", "--part", part, "--json"],
                        capture_output=True, text=True)
    if pj.returncode in (0, 1) and pj.stdout.strip():
        pj = json.loads(pj.stdout)
        for key, chart in (("xbar_r25_dev_pct", "xbar_r25"), ("xbar_b_k", "xbar_b")):
            c = charts.get(chart, {})
            check("lot: control chart %s has a point per lot and three limits" % chart,
                  c.get("points") == len(pj["lots"]) and c.get("limits") == 3)
        check("lot: control chart points equal drift --part --json",
              numbers(lot_html, "lots", "mr") == [l["r25_dev_mean_pct"] for l in pj["lots"]] and
              numbers(lot_html, "lots", "mb") == [l["b_mean_k"] for l in pj["lots"]])
    else:
        check("lot: drift --part ran", False, pj.stderr)

    # ---- the table report ------------------------------------------------------------------------
    charts = load(table_html, "table")
    tj = json.load(open(table_json))
    ncodes = tj["code_hi"] - tj["code_lo"] + 1
    m = re.search(r'id="error" data-codes="(\d+)" data-codes-per-band="(\d+)"',
                  open(table_html).read())
    ch = charts.get("table_error", {})
    check("table: the error chart is an envelope of bands covering every code",
          m is not None and int(m.group(1)) == ncodes and ch.get("vertices") == 0 and
          ch.get("bands") == -(-ncodes // int(m.group(2))) and ch.get("bands") <= 256 and
          ch.get("envelope_vertices") == 4 * ch.get("bands"), "%s %s" % (m and m.groups(), ch))
    check("table: max and RMS error equal lut --format json",
          numbers(table_html, "table", "maxerr") == [tj["max_error_c"]] and
          numbers(table_html, "table", "rmserr") == [tj["rms_error_c"]])
    check("table: budget equals lut --format json",
          numbers(table_html, "budget", "rss") == [b["rss_k"] for b in tj["budget"]] and
          numbers(table_html, "budget", "sum") == [b["sum_k"] for b in tj["budget"]])
    text = open(table_html, encoding="utf-8").read()
    check("table: a host table shows no target cost and says why",
          numbers(table_html, "target", "flash") == [] and tj["target"]["name"] == "host" and
          re.search(r'id="target">host: portable C99; no cost shown', text) is not None)
    # the same table emitted for each target: the cost the report shows is lut --format json's
    for tg in ("avr", "cortex-m0", "cortex-m4"):
        th, tjp = os.path.join(outdir, "table-%s.html" % tg), os.path.join(outdir, "table-%s.json" % tg)
        subprocess.run([bandgap, "--db", db, "lut", "--probe", "GH-0417", "--fixed", "10k",
                        "--adc-bits", "12", "--range", "-15C:55C", "--max-error", "0.05C",
                        "--target", tg, "--report", th, "--format", "json", "-o", tjp],
                       check=True, capture_output=True)
        tt = json.load(open(tjp))["target"]
        shown = [numbers(th, "target", c) for c in ("flash", "tablebytes", "codebytes", "percall")]
        want = [[tt["flash_bytes"]], [tt["flash_bytes"] - tt["code_bytes"]], [tt["code_bytes"]],
                [tt["per_conversion"]]]
        body = open(th, encoding="utf-8").read()
        m = re.search(r'<span class="unit">([^<]*)</span>.*?<span class="toolchain">([^<]*)</span>',
                      body)
        check("table for %s: flash, code bytes, %s per conversion and toolchain equal lut "
              "--format json" % (tg, tt.get("per_conversion_unit")),
              shown == want and m is not None and m.group(1) == tt["per_conversion_unit"] and
              m.group(2) == tt["measured_with"], "%s %s %s" % (shown, want, m and m.groups()))



try:
    checks()
finally:
    browser.close()
sys.exit(1 if fails else 0)
