#!/bin/sh
# installed.sh MAKE BUILD: installs kweave into a temporary prefix, builds
# samples/api_example.c against it with nothing but
# `pkg-config --cflags --libs kweave` (the installed kweave.pc must carry that
# prefix), and runs it from there. Leaves nothing behind.
set -eu
MAKE=$1; BUILD=$2
tmp=$(mktemp -d); trap 'rm -rf "$tmp"' EXIT
$MAKE -s install BUILD="$BUILD" PREFIX="$tmp/prefix" >"$tmp/install.log"
pc="$tmp/prefix/lib/pkgconfig"
grep -qx "prefix=$tmp/prefix" "$pc/kweave.pc" || { echo "installed.sh: kweave.pc names another prefix"; exit 1; }
flags=$(PKG_CONFIG_PATH="$pc" pkg-config --cflags --libs kweave)
${CC:-cc} -std=c11 -Wall -Wextra -Werror -o "$tmp/api_example" samples/api_example.c $flags -lm
( cd "$tmp" && LD_LIBRARY_PATH="$tmp/prefix/lib" ./api_example )
# The Python package: installed where the install says, it imports from there.
pyp=$(sed -n 's/^kweave: Python package installed; use it with PYTHONPATH=//p' "$tmp/install.log")
[ -n "$pyp" ] || { echo "installed.sh: the install did not install the Python package:"; cat "$tmp/install.log"; exit 1; }
( cd "$tmp" && PYTHONPATH="$pyp" /usr/bin/python3 -c "import kweave, sys; assert kweave.__file__.startswith(sys.argv[1]), kweave.__file__; print('installed.sh: kweave', kweave.version(), 'imports from', sys.argv[1])" "$pyp" )
echo "installed.sh: samples/api_example.c built with pkg-config against $tmp/prefix and run"
