#!/bin/sh
# Print the newest Python >= 3.12 on this machine that can build a virtualenv.
# Tries, in order: $PYTHON, python3.13, python3.12, python3 on PATH, the versions pyenv
# has installed, then $HOME/.pyenv/versions/*/bin/python3 in case pyenv is not on PATH.
tried=""
ok() {
    "$1" -c 'import sys; sys.exit(sys.version_info < (3, 12))' >/dev/null 2>&1 &&
        "$1" -m venv --help >/dev/null 2>&1
}
candidates=""
[ -n "${PYTHON:-}" ] && candidates="$PYTHON"
candidates="$candidates python3.13 python3.12 python3"
if command -v pyenv >/dev/null 2>&1; then
    root=$(pyenv root 2>/dev/null)
    for v in $(ls -1 "$root/versions" 2>/dev/null | sort -t. -k1,1nr -k2,2nr -k3,3nr); do
        candidates="$candidates $root/versions/$v/bin/python3"
    done
fi
for p in $(ls -1d "$HOME"/.pyenv/versions/*/bin/python3 2>/dev/null | sort -r -V); do
    candidates="$candidates $p"
done
for c in $candidates; do
    tried="$tried $c"
    if ok "$c"; then
        command -v "$c" 2>/dev/null || echo "$c"
        exit 0
    fi
done
echo "qhat needs Python >= 3.12 with venv; tried:$tried" >&2
echo "set PYTHON=/path/to/python3.12 (or newer) and run make again" >&2
exit 1
