#!/usr/bin/env python3
"""Counts the public items of the mvdist library from rustdoc's JSON output.

Usage (needs a nightly toolchain for the JSON format):

    CARGO_TARGET_DIR=/tmp/doc-json cargo +nightly rustdoc -p mvdist --lib -- \
        -Z unstable-options --output-format json
    python3 tools/count_public_api.py /tmp/doc-json/doc/mvdist.json

Walks the public module tree from the crate root (following re-exports once,
so an item reachable under two paths counts once) and counts modules,
structs, enums and their variants, traits, free functions, constants, type
aliases, and public inherent methods of the structs and enums (trait
implementations are not counted).
"""
import collections
import json
import sys


def main(path):
    doc = json.load(open(path))
    index = doc["index"]
    counts = collections.Counter()
    seen = set()

    def item(i):
        return index.get(str(i))

    def walk(i):
        if i in seen:
            return
        seen.add(i)
        it = item(i)
        if it is None or it["crate_id"] != 0:
            return
        kind, inner = next(iter(it["inner"].items()))
        if kind == "module":
            counts["modules"] += 1
            for j in inner["items"]:
                walk(j)
        elif kind == "use":
            if inner.get("id") is not None:
                walk(inner["id"])
        elif kind in ("struct", "enum", "trait"):
            counts[kind + "s"] += 1
            if kind == "enum":
                counts["enum variants"] += len(inner["variants"])
            for im in inner.get("impls", []):
                imp = item(im)
                if imp is None:
                    continue
                imp = imp["inner"]["impl"]
                if imp.get("trait") is None and not imp.get("is_synthetic") and not imp.get("blanket_impl"):
                    for j in imp["items"]:
                        jt = item(j)
                        if jt and jt["visibility"] == "public" and "function" in jt["inner"]:
                            counts["inherent methods"] += 1
        elif kind == "function":
            counts["free functions"] += 1
        elif kind == "constant":
            counts["constants"] += 1
        elif kind == "type_alias":
            counts["type aliases"] += 1
        else:
            counts[kind] += 1

    walk(doc["root"])
    for key in sorted(counts):
        print(f"{key}: {counts[key]}")


if __name__ == "__main__":
    main(sys.argv[1] if len(sys.argv) > 1 else "target/doc/mvdist.json")
