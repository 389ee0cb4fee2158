#!/usr/bin/env bash
# Whole-process timing: `ebb report --demo` against the start-up of a minimal Rust binary
# built with the same toolchain, for the usual release build and for the static-pie build
# (glibc linked in, still position-independent) that avoids the dynamic loader's work.
# Needs hyperfine (Debian package `hyperfine`) and, for the static build, glibc's static
# libraries (libc6-dev) on x86_64 Linux.
set -euo pipefail
cd "$(dirname "$0")/.."
cargo build --release --quiet
static=target/x86_64-unknown-linux-gnu/release/ebb
cargo static-build --quiet  # the alias in .cargo/config.toml
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
printf 'fn main() {}\n' > "$tmp/minimal.rs"
rustc -O -o "$tmp/minimal" "$tmp/minimal.rs"
hyperfine --warmup 20 --runs 300 -N \
  "$tmp/minimal" \
  "./target/release/ebb report --demo" \
  "./target/release/ebb report --demo --json" \
  "./$static report --demo --json" \
  --export-markdown "${1:-/dev/stdout}"
