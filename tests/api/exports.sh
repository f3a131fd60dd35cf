#!/bin/sh
# exports.sh LIB HEADER...: the shared library exports exactly the functions
# the public headers mark KW_API (and no internal symbol), and carries a
# SONAME with the major version.
set -eu
lib=$1; shift
tmp=$(mktemp -d); trap 'rm -rf "$tmp"' EXIT
nm -D --defined-only "$lib" | awk '$2 ~ /^[TtWw]$/ {print $3}' | LC_ALL=C sort -u > "$tmp/exported"
cat "$@" | tr '\n' ' ' | sed 's/KW_API/\nKW_API/g' | grep '^KW_API' |
    sed -n 's/^KW_API[^(]*[ *]\(kw_[a-z0-9_]*\)[ ]*(.*/\1/p' | LC_ALL=C sort -u > "$tmp/declared"
extra=$(comm -23 "$tmp/exported" "$tmp/declared" | grep -v '^_' || true)
missing=$(comm -13 "$tmp/exported" "$tmp/declared" || true)
soname=$(objdump -p "$lib" | awk '/SONAME/ {print $2}')
rc=0
[ -z "$extra" ] || { echo "exports.sh: exported but not declared KW_API:" $extra; rc=1; }
[ -z "$missing" ] || { echo "exports.sh: declared KW_API but not exported:" $missing; rc=1; }
case "$soname" in libkweave.so.[0-9]*) ;; *) echo "exports.sh: SONAME '$soname'"; rc=1 ;; esac
[ $rc = 0 ] && echo "exports.sh: $(wc -l < "$tmp/exported") functions exported, all declared; SONAME $soname"
exit $rc
