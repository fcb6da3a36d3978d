#!/usr/bin/env python3
"""Carries the plan and partial files of this corpus over to a new network
fingerprint without changing anything else in them: every occurrence of an
old fingerprint is replaced by the new one in plan/, tree/, partial/ and
cases.toml, and the SHA-256 trailer of each partial whose trailer was valid
before is recomputed (the files damaged on purpose keep their damage).

Usage, from this directory, after the fingerprint definition changed:

    ./refingerprint.py OLD_NET=NEW_NET [...] OLD_PLAN=NEW_PLAN [...]

The new fingerprints come from `sliceplan inspect NET --json`
(network.fingerprint) and from the header of a partial that
`sliceplan run plan/good.plan.toml --chunk 0 --of 2` writes.
"""
import hashlib, pathlib, sys

pairs = [a.split("=") for a in sys.argv[1:]]
here = pathlib.Path(__file__).parent
TAG = b"sha256:"

def trailer_ok(data):
    i = data.rfind(TAG)
    if i < 0 or len(data) != i + len(TAG) + 65:
        return None
    return hashlib.sha256(data[:i]).hexdigest().encode() == data[i + len(TAG):i + len(TAG) + 64]

for path in sorted(here.rglob("*")):
    if not path.is_file() or path.suffix not in (".toml", ".partial"):
        continue
    data = path.read_bytes()
    new = data
    for old, to in pairs:
        new = new.replace(old.encode(), to.encode())
    if new == data:
        continue
    if path.suffix == ".partial" and trailer_ok(data):
        i = new.rfind(TAG)
        new = new[:i] + TAG + hashlib.sha256(new[:i]).hexdigest().encode() + b"\n"
    path.write_bytes(new)
    print("updated", path.relative_to(here))
