#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
"""Hostile text in every text field, through every report and output.

Usage: hostile_check.py BANDGAP WORKDIR

The same calibration record is built twice with the same commands: once with plain tokens in
every text field (lot code, part, notes, serials, reference identifier and certificate,
operator, medium, ambient, reading notes, exclusion reason and name, laboratory, customer,
reissue reason, part source) and once with hostile text in their place: markup that would
add elements or attributes, quotes and ampersands, comment and CDATA delimiters, the C
comment end, template and shell syntax, non-ASCII letters and signs.  The calibration, lot
and table reports of both are loaded in Chromium (WebDriver, as tests/reports_check.py) and
read back (tests/webdriver.py) as a list of elements (tag and attribute names, in document order) and of text
nodes.  Checked:
  - the hostile pages have exactly the elements and attributes of the plain ones: the text
    added no markup;
  - every text node and attribute value of a hostile page equals the plain page's with each
    token replaced by its hostile text: the page shows the input literally, nothing lost or
    altered;
  - JSON (export, show, list, drift) parses and holds the hostile text byte for byte, CSV
    (export) reads back to it, the C table compiles;
  - each field refuses a control character, a bidirectional override and invalid UTF-8 with
    a message naming the field, exit 65, and the database unchanged.
Prints "ok NAME" / "not ok NAME" lines."""
import csv, hashlib, io, json, os, re, subprocess, sys

from webdriver import Browser

bandgap, work = sys.argv[1:3]
fails = 0
env = dict(os.environ, SOURCE_DATE_EPOCH="1764576000", USER="tester")


def check(name, cond, detail=""):
    global fails
    print(("ok " if cond else "not ok ") + name + ("" if cond else ": " + detail[:400]))
    fails += 0 if cond else 1


# Each field: a plain token (unique, same sort position as its hostile text) and the hostile
# text.  Tokens share no prefix with each other or with any word of the reports.
HOSTILE = {
    "lot": ("L1qzlot", "L1<script>alert(1)</script>"),
    "part": ("N1qzpart", "N1<img src=x onerror=alert(2)>&amp;"),
    "lotnote": ("qzlotnote", "\"quoted\" 'single' <b>bold</b> & done"),
    "p1": ("P1qzser", "P1<!--"),
    "p2": ("P2qzser", "P2-->]]><![CDATA["),
    "p3": ("P3qzser", "P3'\";--</td></tr>"),
    "pnote": ("qzpnote", "</style><style>*{display:none}</style>"),
    "ref": ("R1qzref", "R1<svg onload=alert(3)>"),
    "cert": ("qzcert", "Cert */ #include <x> /*"),
    "refnote": ("qzrefnote", "${HOME} $(id) `id` {{x}}"),
    "operator": ("qzoper", "J. M\u00fcller-\u00c5str\u00f6m <op@x>"),
    "medium": ("qzmedium", "oil \u00b0C \u03a9 \u00b5 \u2264 \u65e5\u672c"),
    "ambient": ("qzambient", "23 \u00b0C\t45 %RH <i>"),
    "runnote": ("qzrunnote", "<a href=\"javascript:alert(4)\">x</a>"),
    "rnote": ("qzrnote", "row<br>note"),
    "why": ("qzwhy", "bubble <em>in</em> the bath & reading \"off\""),
    "by": ("qzby", "<u>QA</u>"),
    "lab": ("qzlab", "Lab & Co. <div style=\"x\">"),
    "customer": ("qzcust", "</html><p>fake</p>"),
    "reissue": ("qzreissue", "typo in <title>"),
    "source": ("qzsource", "handbook \u00a73 <sup>2</sup>"),
    "partnote": ("qzpartnote", "<meta http-equiv=refresh content=0>"),
}
READINGS = open(os.path.join(os.path.dirname(__file__), "cli/lib/bath.csv")).read().splitlines()


def run(db, *args, ok=True):
    """bandgap in the database's directory, so that file names are the same in both."""
    r = subprocess.run([os.path.abspath(bandgap), "--db", "cal.db", *args], capture_output=True,
                       env=env, cwd=os.path.dirname(db))
    if ok and r.returncode != 0:
        raise SystemExit("setup failed: %s: %s" % (args, r.stderr.decode(errors="replace")))
    return r


def build(d, which):
    """The record with text 'which' (0 plain, 1 hostile) in every field."""
    v = {k: t[which] for k, t in HOSTILE.items()}
    os.makedirs(d, exist_ok=True)
    db = os.path.join(d, "cal.db")
    run(db, "init")
    run(db, "part", "set", v["part"], "--r25", "10k", "--beta", "3950K", "--tol", "0.5K",
        "--over", "0/70", "--note", v["partnote"])
    run(db, "lot", "add", v["lot"], "--part", v["part"], "--r25", "10k", "--beta", "3950K",
        "--tol-r25", "1%", "--tol-beta", "1%", "--note", v["lotnote"])
    run(db, "ref", "add", v["ref"], "--cert", v["cert"], "--due", "2027-06-30",
        "--linear", "-0.01K,0.0001,20C", "--note", v["refnote"])
    rows = READINGS[1:]
    for i, p in enumerate(("p1", "p2", "p3")):
        run(db, "probe", "add", v[p], "--lot", v["lot"], "--note", v["pnote"])
        for cal in range(2):
            lines = [READINGS[0], rows[0] + ",note"]
            for j, row in enumerate(rows[1:]):
                f = row.split(",")
                f[1] = "%.3f" % (float(f[1]) * (1 + 0.0004 * i + 0.0011 * cal + 1e-5 * j))
                note = v["rnote"] if j == 2 else ""
                lines.append(",".join(f) + ',"%s"' % note.replace('"', '""'))
            path = "r%d%d.csv" % (i, cal)
            open(os.path.join(d, path), "w").write("\n".join(lines) + "\n")
            run(db, "import", path, "--probe", v[p], "--ref", v["ref"], "--operator",
                v["operator"], "--medium", v["medium"], "--ambient", v["ambient"], "--note",
                v["runnote"], "--at", "2026-0%d-1%dT09:00:00Z" % (3 + 3 * cal, i))
    show = json.loads(run(db, "show", "run", "1", "--json").stdout)
    rid = show["readings"][4]["id"]
    run(db, "exclude", str(rid), "--why", v["why"], "--by", v["by"])
    run(db, "fit", "--lot", v["lot"])
    run(db, "fit", "--probe", v["p1"], "--run", "1")
    run(db, "report", "--run", "1", "--lab", v["lab"], "--customer", v["customer"], "-o",
        "run0.html")
    run(db, "report", "--run", "1", "--lab", v["lab"], "--customer", v["customer"],
        "--reissue", "1", "--why", v["reissue"], "-o", "run.html")
    run(db, "report", "--lot", v["lot"], "--lab", v["lab"], "-o", "lot.html")
    run(db, "lut", "--probe", v["p1"], "--fixed", "10k", "--adc-bits", "10", "--range",
        "0C:60C", "--max-error", "0.1C", "--report", "table.html",
        "-o", "table.c")
    return db, v


plain_dir, evil_dir = os.path.join(work, "plain"), os.path.join(work, "hostile")
plain_db, pv = build(plain_dir, 0)
evil_db, hv = build(evil_dir, 1)
pairs = sorted(((pv[k], hv[k]) for k in HOSTILE), key=lambda t: -len(t[0]))


def subst(s):
    for a, b in pairs:
        s = s.replace(a, b)
    return s


def unhash(s):
    """The record chain's hashes differ with the content: compared as a placeholder."""
    return re.sub(r"\b[0-9a-f]{64}\b", "HASH", s)


def subst_obj(o):
    if isinstance(o, str):
        return subst(o)
    if isinstance(o, list):
        return [subst_obj(x) for x in o]
    if isinstance(o, dict):
        return {subst(k): subst_obj(x) for k, x in o.items()}
    return o


# ---- JSON, CSV and C outputs hold the text byte for byte ----
for args in (("export", "--lot", "{lot}", "--json"), ("show", "run", "1", "--json"),
             ("list", "runs", "--json"), ("list", "fits", "--json"), ("drift", "--lot", "{lot}", "--json"),
             ("report", "--list", "--json"), ("probe", "list", "--json"),
             ("ref", "list", "--json"), ("part", "show", "{part}", "--json"),
             ("lot", "show", "{lot}", "--json")):
    a = [x.format(**pv) for x in args]
    b = [x.format(**hv) for x in args]
    ra, rb = run(plain_db, *a, ok=False), run(evil_db, *b, ok=False)
    try:
        ja, jb = json.loads(ra.stdout), json.loads(rb.stdout)
        if args[0] == "report":  # the stored reports' lengths differ with the text
            for x in ja + jb:
                x.pop("bytes")
        same = subst_obj(ja) == jb
    except ValueError as e:
        same = False
    check("json %s: hostile text held literally" % " ".join(args[:2]),
          ra.returncode == rb.returncode and same, rb.stderr.decode(errors="replace"))
ca = run(plain_db, "export", "--lot", pv["lot"], "--csv").stdout.decode()
cb = run(evil_db, "export", "--lot", hv["lot"], "--csv").stdout.decode()
check("csv export: reads back to the hostile text",
      list(csv.reader(io.StringIO(subst(ca)))) == list(csv.reader(io.StringIO(cb))))
cc = subprocess.run(["cc", "-std=c11", "-Wall", "-Werror", "-c", "-o", os.devnull,
                     os.path.join(evil_dir, "table.c")], capture_output=True, text=True)
check("c table with hostile provenance compiles", cc.returncode == 0, cc.stderr)

# ---- the door: control characters, bidirectional overrides, invalid UTF-8 ----
BAD = {"control": "x\x1b]0;t\x07", "override": "x\u202ey", "invalid UTF-8": b"x\xffy"}
DOOR = [  # (field name in the message, command with {} for the text)
    ("lot code", ["lot", "add", "{}", "--part", "P", "--r25", "10k", "--beta", "3950K",
                  "--tol-r25", "1%", "--tol-beta", "1%"]),
    ("note", ["lot", "add", "L9", "--part", "P", "--r25", "10k", "--beta", "3950K",
              "--tol-r25", "1%", "--tol-beta", "1%", "--note", "{}"]),
    ("serial", ["probe", "add", "{}", "--lot", hv["lot"]]),
    ("certificate", ["ref", "add", "R9", "--cert", "{}"]),
    ("reference identifier", ["ref", "add", "{}", "--cert", "c"]),
    ("operator", ["import", "r00.csv", "--probe", hv["p1"],
                  "--new-run", "--operator", "{}"]),
    ("medium", ["import", "r00.csv", "--probe", hv["p1"],
                "--new-run", "--medium", "{}"]),
    ("reason", ["exclude", "3", "--why", "{}"]),
    ("part", ["part", "set", "{}", "--r25", "10k", "--beta", "3950K"]),
    ("laboratory", ["report", "--lot", hv["lot"], "--lab", "{}", "-o",
                    os.path.join(work, "x.html")]),
]
digest = hashlib.sha256(open(evil_db, "rb").read()).hexdigest()
for field, cmd in DOOR:
    for kind, text in BAD.items():
        argv = [os.fsencode(os.path.abspath(bandgap)), b"--db", b"cal.db"]
        for x in cmd:
            if x == "{}":
                argv.append(text if isinstance(text, bytes) else text.encode())
            else:
                argv.append(x.encode())
        r = subprocess.run(argv, capture_output=True, env=env, cwd=evil_dir)
        err = r.stderr.decode("utf-8", errors="replace")
        check("door: %s with %s refused, field named, exit 65" % (field, kind),
              r.returncode == 65 and (field + ":") in err and "\x1b" not in err, err)
check("door: the database is unchanged by the refusals",
      hashlib.sha256(open(evil_db, "rb").read()).hexdigest() == digest)

# ---- the browser ----
SHAPE = """
const els = [], texts = [];
const walk = n => {
  if (n.nodeType === 1) {
    const attrs = Array.from(n.attributes).map(a => [a.name, a.value]);
    attrs.sort((x, y) => x[0] < y[0] ? -1 : 1);
    els.push([n.tagName, attrs]);
  } else if (n.nodeType === 3 || n.nodeType === 8) {
    texts.push((n.nodeType === 8 ? '<!--' : '') + n.nodeValue);
  }
  n.childNodes.forEach(walk);
};
walk(document.documentElement);
return { els: els, texts: texts, title: document.title };
"""
with Browser() as browser:

    def shape(path):
        browser.cmd("POST", "/se/log", {"type": "browser"})
        browser.cmd("POST", "/url", {"url": "file://" + os.path.abspath(path)})
        s = browser.cmd("POST", "/execute/sync", {"script": SHAPE, "args": []})
        s["errors"] = [e for e in browser.cmd("POST", "/se/log", {"type": "browser"})
                       if e.get("level") == "SEVERE"]
        return s

    for name in ("run", "lot", "table"):
        a = shape(os.path.join(plain_dir, name + ".html"))
        b = shape(os.path.join(evil_dir, name + ".html"))
        tags_a = [(t, [k for k, _ in at]) for t, at in a["els"]]
        tags_b = [(t, [k for k, _ in at]) for t, at in b["els"]]
        first = next((i for i, (x, y) in enumerate(zip(tags_a, tags_b)) if x != y), None)
        check("%s report: hostile text adds no element or attribute (%d elements)" %
              (name, len(tags_a)), tags_a == tags_b,
              "first difference at element %s: %s vs %s" %
              (first, first is not None and tags_a[first], first is not None and tags_b[first]))
        texts_ok = [unhash(subst(t)) for t in a["texts"]] == [unhash(t) for t in b["texts"]]
        bad = next((subst(x) + " | " + y for x, y in zip(a["texts"], b["texts"])
                    if unhash(subst(x)) != unhash(y)), "")
        check("%s report: the page's text equals the input literally" % name,
              texts_ok and len(a["texts"]) == len(b["texts"]), bad)
        vals_ok = all(unhash(subst(va)) == unhash(vb) for (_, x), (_, y) in zip(a["els"], b["els"])
                      for (_, va), (_, vb) in zip(x, y))
        check("%s report: attribute values carry the input literally" % name, vals_ok)
        used = sum(1 for k in HOSTILE if hv[k] in "".join(b["texts"]) + b["title"])
        check("%s report: hostile fields shown (%d of %d)" % (name, used, len(HOSTILE)),
              used >= (1 if name == "table" else 3))
        check("%s report: no console errors" % name, not b["errors"], json.dumps(b["errors"]))
sys.exit(1 if fails else 0)
