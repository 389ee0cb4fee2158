#!/usr/bin/env bash
# Whole-process timing: `ebb report --demo` against the start-up of a minimal Rust binary
# built with the same toolchain. Needs hyperfine (Debian package `hyperfine`).
set -euo pipefail
cd "$(dirname "$0")/.."
cargo build --release --quiet
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
printf 'fn main() {}\n' > "$tmp/minimal.rs"
rustc -O -o "$tmp/minimal" "$tmp/minimal.rs"
hyperfine --warmup 20 --runs 300 -N \
  "$tmp/minimal" \
  "./target/release/ebb report --demo" \
  "./target/release/ebb report --demo --json" \
  --export-markdown "${1:-/dev/stdout}"
