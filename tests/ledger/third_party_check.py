"""Check a fleetfuel CSV export as a third party would: Python 3 standard library only.

Usage: python3 third_party_check.py FILE.csv   (FILE.csv.manifest.json beside it)
The README gives the same text; tests/ledger/test_third_party_check.py runs this file.
"""

import csv
import hashlib
import json
import sys

path = sys.argv[1]
with open(path + ".manifest.json", encoding="utf-8") as manifest:
    m = json.load(manifest)
with open(path, "rb") as data:
    digest = hashlib.sha256(data.read()).hexdigest()
assert digest == m["sha256"], "the file differs from its manifest"
NUMBERS = {"unit_id", "seq", "recorded_by_id", "component_id", "cylinder", "work_order_id",
           "corrects_id", "hour_meter", "water_ml", "value", "low_limit", "high_limit",
           "dp_before_bar"}  # fmt: skip


def cell(name, text):
    if name == "passed":
        return {"true": True, "false": False}.get(text)
    if name in NUMBERS and text != "":
        number = float(text)
        return int(number) if number.is_integer() else number
    if name in NUMBERS:
        return None
    return text[1:] if text.startswith("'") else text  # undo the formula escaping


heads = {str(u["unit_id"]): u["chain_head"] for u in m["units"] if u["chain_head"]}
last = {}
rows = csv.DictReader(open(path, newline="", encoding="utf-8"))  # noqa: SIM115
for r in rows:
    content = {name: cell(name, r[name]) for name in m["hashed_fields"]}
    content.update({n: r[n] for n in m.get("hashed_when_set", []) if r[n] != ""})
    body = json.dumps(content, sort_keys=True, separators=(",", ":"), ensure_ascii=False)
    event = f"event {r['event_id']} of {r['fleet_number']}"
    assert hashlib.sha256((body + r["prev_hash"]).encode()).hexdigest() == r["hash"], event
    assert last.get(r["unit_id"], r["prev_hash"]) == r["prev_hash"], f"chain broken at {event}"
    assert r["seq"] != "1" or r["prev_hash"] == m["genesis"], f"{event} does not start a chain"
    head = heads.get(r["unit_id"])
    assert not head or int(r["seq"]) != head["seq"] or r["hash"] == head["hash"], event
    last[r["unit_id"]] = r["hash"]
print(f"OK: {m['row_count']} rows, {len(last)} unit chain(s) agree with the manifest")
