#!/usr/bin/env python3
"""Fail when a locked dependency needs a newer Rust than our `rust-version` says.

Reads `cargo metadata` (every package in Cargo.lock, for every platform) and compares each
package's declared `rust_version` with ebb's own.
"""
import json
import subprocess
import sys


def version(text):
    parts = [int(p) for p in text.split(".")]
    return tuple(parts + [0] * (3 - len(parts)))


meta = json.loads(
    subprocess.run(
        ["cargo", "metadata", "--format-version", "1", "--locked"],
        check=True,
        stdout=subprocess.PIPE,
    ).stdout
)
ours = next(p for p in meta["packages"] if p["id"] in meta["workspace_members"])
if not ours.get("rust_version"):
    sys.exit("Cargo.toml: rust-version is not set")
claimed = version(ours["rust_version"])
newer = sorted(
    (version(p["rust_version"]), p["name"], p["version"])
    for p in meta["packages"]
    if p.get("rust_version") and version(p["rust_version"]) > claimed
)
for need, name, ver in newer:
    print(
        f"{name} {ver} needs Rust {'.'.join(map(str, need))}, "
        f"but Cargo.toml says rust-version = {ours['rust_version']}",
        file=sys.stderr,
    )
sys.exit(1 if newer else 0)
