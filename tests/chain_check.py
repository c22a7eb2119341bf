#!/usr/bin/python3
# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
"""The record chain, recomputed independently and attacked.

Usage: chain_check.py BANDGAP WORKDIR

1. The demo's database: every hash of the chain is recomputed here from the rows with
   Python's sqlite3 and hashlib modules, from the encoding documented in
   docs/commands/verify.md (not from bandgap's code), and must equal the stored one; the
   head must equal what `bandgap verify` prints and what the issued reports show.
2. Forgery: for each kind of record, a copy of the database is changed behind bandgap's
   back (the append-only triggers dropped first) and `bandgap verify` must exit 65 and name
   the record: a lot's tolerance, a probe's lot, a reference's correction, a part
   specification, a run's operator, a reading's resistance, a deleted exclusion, a fit's
   coefficient, a stored report's bytes, a deleted chain record, a row added outside.
3. A chain rewritten from the forgery onwards verifies, but its head differs from the one
   the reports show: only a head kept outside the database reveals it.
4. A database of schema version 1 is chained when upgraded, and verifies.
Prints "ok NAME" / "not ok NAME" lines."""
import hashlib, json, os, re, shutil, sqlite3, struct, subprocess, sys

bandgap, work = sys.argv[1:3]
bandgap = os.path.abspath(bandgap)
fails = 0
env = dict(os.environ, SOURCE_DATE_EPOCH="1764576000")


def check(name, cond, detail=""):
    global fails
    print(("ok " if cond else "not ok ") + name + ("" if cond else ": " + str(detail)[:400]))
    fails += 0 if cond else 1


def bg(db, *args):
    return subprocess.run([bandgap, "--db", db, *args], capture_output=True, text=True, env=env)


def encode_row(cur, row):
    """The canonical encoding of one row (docs/commands/verify.md)."""
    names = [d[0] for d in cur.description]
    out = b""
    for name, v in sorted(zip(names, row), key=lambda t: t[0].encode()):
        if v is None:
            continue
        out += name.encode() + b"\0"
        if isinstance(v, int):
            out += b"i%d\n" % v
        elif isinstance(v, float):
            out += b"r%016x\n" % struct.unpack("<Q", struct.pack("<d", v))[0]
        elif isinstance(v, str):
            b = v.encode()
            out += b"t%d:" % len(b) + b + b"\n"
        else:
            out += b"b%d:" % len(v) + bytes(v) + b"\n"
    return out


def recompute(path):
    """Every record's hash from the rows; returns (hashes computed, hashes stored)."""
    con = sqlite3.connect(path)
    prev = "0" * 64
    mine, stored = [], []
    for seq, kind, row_id, h in con.execute("SELECT seq, kind, row_id, hash FROM chain "
                                            "ORDER BY seq").fetchall():
        m = hashlib.sha256(b"bandgap record chain 1\n%s\n%s\n%d\n" %
                           (prev.encode(), kind.encode(), row_id))
        cur = con.execute("SELECT * FROM %s WHERE rowid = ?" % kind, (row_id,))
        m.update(encode_row(cur, cur.fetchone()))
        if kind == "run":
            cur = con.execute("SELECT * FROM reading WHERE run_id = ? ORDER BY id", (row_id,))
            for r in cur.fetchall():
                m.update(b"reading\n" + encode_row(cur, r))
        prev = m.hexdigest()
        mine.append(prev)
        stored.append(h)
    con.close()
    return mine, stored


demo = os.path.join(work, "demo")
r = subprocess.run([bandgap, "demo", "--dir", demo], capture_output=True, text=True, env=env)
check("demo runs", r.returncode == 0, r.stderr)
db = os.path.join(demo, "demo.db")
mine, stored = recompute(db)
check("every record's hash recomputed independently (%d records)" % len(mine),
      len(mine) > 50 and mine == stored)
v = bg(db, "verify", "--json")
vj = json.loads(v.stdout)
check("verify: whole, head equals the recomputed one",
      v.returncode == 0 and vj["ok"] and vj["records"] == len(mine) and vj["head"] == mine[-1],
      v.stdout + v.stderr)
con = sqlite3.connect(db)
heads = []
for (content,) in con.execute("SELECT content FROM artifact ORDER BY id"):
    m = re.search(rb'data-records="(\d+)" data-head="([0-9a-f]{64})"', content)
    heads.append((int(m.group(1)), m.group(2).decode()) if m else None)
con.close()
check("each issued report shows the chain head it was issued on",
      heads and all(h and mine[h[0] - 1] == h[1] for h in heads), heads)

FORGERIES = [  # (name, SQL, the table the message must name or None for "missing")
    ("a lot's tolerance", "DROP TRIGGER lot_keep; UPDATE lot SET tol_r25 = 0.05 WHERE id = 1",
     "lot"),
    ("a probe's lot", "DROP TRIGGER probe_keep; UPDATE probe SET lot_id = 2 WHERE id = 1",
     "probe"),
    ("a reference's correction", "DROP TRIGGER reference_keep; UPDATE reference SET "
     "lin_c0_k = 0 WHERE id = 1", "reference"),
    ("a part specification", "DROP TRIGGER part_spec_keep; UPDATE part_spec SET tol_k = 1.0 "
     "WHERE id = 1", "part_spec"),
    ("a run's operator", "DROP TRIGGER run_keep; UPDATE run SET operator = 'X' WHERE id = 25",
     "run"),
    ("a reading's resistance", "DROP TRIGGER reading_keep; UPDATE reading SET r_ohm = "
     "r_ohm * 1.000001 WHERE id = 40", "run"),
    ("a deleted exclusion", "DROP TRIGGER exclusion_stay; DELETE FROM exclusion WHERE "
     "reading_id = (SELECT min(reading_id) FROM exclusion)", None),
    ("a fit's coefficient", "DROP TRIGGER fit_keep; UPDATE fit SET c1 = c1 * (1 + 1e-15) "
     "WHERE id = 7", "fit"),
    ("a stored report's bytes", "DROP TRIGGER artifact_keep; UPDATE artifact SET content = "
     "CAST(replace(CAST(content AS TEXT), 'within', 'outside') AS BLOB) WHERE id = 1",
     "artifact"),
    ("a deleted chain record", "DROP TRIGGER chain_stay; DELETE FROM chain WHERE seq = 20",
     None),
    ("a row added outside", "INSERT INTO probe (serial, lot_id, created_at) VALUES "
     "('FORGED', 1, '2026-01-01T00:00:00Z')", "probe"),
]
for name, sql, table in FORGERIES:
    path = os.path.join(work, "forged.db")
    shutil.copy(db, path)
    con = sqlite3.connect(path)
    try:
        con.executescript(sql)
        con.commit()
        forged = True
    except sqlite3.Error as e:
        forged = str(e)
    con.close()
    v = bg(path, "verify", "--json")
    try:
        vj = json.loads(v.stdout)
    except ValueError:
        vj = {}
    named = vj.get("table") == table if table else "missing" in vj.get("problem", "") or \
        "deleted" in vj.get("problem", "")
    if table == "artifact":
        g = bg(path, "report", "--get", "1", "-o", os.path.join(work, "got.html"))
        check("a forged stored report is not served (exit 65)",
              g.returncode == 65 and "does not match" in g.stderr and
              not os.path.exists(os.path.join(work, "got.html")), g.stderr)
    check("forged %s is caught (exit 65, named)" % name,
          forged is True and v.returncode == 65 and not vj.get("ok", True) and named,
          "%s %s %s" % (forged, v.returncode, v.stdout + v.stderr))

# a chain rewritten after a forgery: consistent, but its head is not the reports' head
path = os.path.join(work, "rewritten.db")
shutil.copy(db, path)
con = sqlite3.connect(path)
con.executescript("DROP TRIGGER fit_keep; UPDATE fit SET c0 = c0 * 1.001 WHERE id = 7; "
                  "DROP TRIGGER chain_keep;")
con.commit()
con.close()
mine2, stored2 = recompute(path)
con = sqlite3.connect(path)
for seq, h in enumerate(mine2, 1):
    con.execute("UPDATE chain SET hash = ? WHERE seq = ?", (h, seq))
con.commit()
con.close()
v = bg(path, "verify", "--json")
vj = json.loads(v.stdout)
check("a rewritten chain verifies but its head differs from the reports' head",
      v.returncode == 0 and vj["head"] != mine[-1] and mine2[heads[-1][0] - 1] != heads[-1][1],
      v.stdout)

# an old database (schema 1, rows added as version 1 of the program would) is chained when
# upgraded
old = os.path.join(work, "old.db")
con = sqlite3.connect(old)
con.executescript(open("db/001-initial.sql").read())
con.executescript("PRAGMA application_id = 1111974256; PRAGMA user_version = 1; "
                  "INSERT INTO lot VALUES (1, 'L-OLD', 'P', 10000.0, 3950.0, 298.15, 358.15, "
                  "0.01, 0.01, NULL, '2025-01-01T00:00:00Z'); "
                  "INSERT INTO probe VALUES (1, 'S-OLD', 1, 'invented', '2025-01-01T00:00:00Z');")
con.commit()
con.close()
r = bg(old, "init")
v = bg(old, "verify", "--json")
vj = json.loads(v.stdout) if v.stdout else {}
m, s2 = recompute(old)
check("an upgraded old database is chained and verifies (%d records)" % len(m),
      r.returncode == 0 and v.returncode == 0 and vj.get("ok") and len(m) == 2 and m == s2,
      r.stderr + v.stdout + v.stderr)
sys.exit(1 if fails else 0)
