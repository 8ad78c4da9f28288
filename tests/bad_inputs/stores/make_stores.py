#!/usr/bin/env python3
"""Rebuilds the hostile history stores of this folder (each a few KB).

    /usr/bin/python3 tests/bad_inputs/stores/make_stores.py build/firmcall

A firmcall store of two small runs (invented obligors) is recorded by the given binary and
compacted (page size 512), then damaged in one way per file. The other files are written
directly: a zero-byte file, a text file named .db, another application's SQLite database.
"""
import os
import sqlite3
import subprocess
import sys
import tempfile

here = os.path.dirname(os.path.abspath(__file__))
firmcall = os.path.abspath(sys.argv[1])
BOOK = """obligors:
  - {id: ALD-01, name: Alderby Mills, market_cap: %s, equity_vol: 0.3, default_point: 50, rate: 0.02}
  - {id: BRK-02, name: Brackwater Foods, market_cap: 80, equity_vol: 0.25, default_point: 60, rate: 0.02}
"""


def out(name):
    return os.path.join(here, name)


with tempfile.TemporaryDirectory() as tmp:
    store = os.path.join(tmp, "store.sqlite")
    for as_of, cap in (("2026-11-20", "100"), ("2026-11-27", "70")):
        book = os.path.join(tmp, "book.yaml")
        with open(book, "w") as f:
            f.write(BOOK % cap)
        subprocess.run([firmcall, "score", book, "--record", "--db", store, "--as-of", as_of],
                       check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    c = sqlite3.connect(store)
    c.execute("PRAGMA page_size = 512")
    c.execute("VACUUM")
    c.close()
    data = open(store, "rb").read()

open(out("valid_store.db"), "wb").write(data)

open(out("missing_table.db"), "wb").write(data)
c = sqlite3.connect(out("missing_table.db"))
c.execute("DROP TABLE run_obligors")
c.commit()
c.execute("VACUUM")
c.close()

open(out("newer_schema.db"), "wb").write(data)
c = sqlite3.connect(out("newer_schema.db"))
c.execute("INSERT INTO firmcall_schema VALUES (99, '2030-01-01T00:00:00Z', 'from a later release')")
c.commit()
c.close()

open(out("truncated.db"), "wb").write(data[: len(data) // 2])
open(out("header_only.db"), "wb").write(data[:100])
# The header and first page intact, every later page overwritten with a fixed pattern.
damaged = bytearray(data)
for i in range(512, len(damaged)):
    damaged[i] = (i * 131 + 7) & 0xFF
open(out("damaged_pages.db"), "wb").write(bytes(damaged))

open(out("zero_bytes.db"), "wb").close()
with open(out("text_file.db"), "w") as f:
    f.write("These are meeting notes, not a database.\n")

if os.path.exists(out("other_application.db")):
    os.remove(out("other_application.db"))
c = sqlite3.connect(out("other_application.db"))
c.execute("PRAGMA application_id = 1296122945")  # 0x4d414441, not firmcall's
c.execute("CREATE TABLE contacts (name TEXT, phone TEXT)")
c.execute("INSERT INTO contacts VALUES ('Invented Person', '555-0100')")
c.commit()
c.close()
