# Sourced by the scripts that run the pinned numpy/scipy (POSIX sh; needs `repo` set to the
# repository root): sets `venv` to REDRESS_REFERENCE_VENV (default .venv-reference at the root),
# creates it when missing, and (re)installs requirements.txt whenever that file differs from the
# copy the last install left in the environment, so a pin added later reaches old checkouts too.
venv=${REDRESS_REFERENCE_VENV:-"$repo/.venv-reference"}
requirements="$repo/scripts/reference/requirements.txt"
if [ ! -x "$venv/bin/python" ]; then
    echo "creating $venv with the pinned reference packages" >&2
    python3 -m venv "$venv"
fi
if ! cmp -s "$requirements" "$venv/installed-requirements.txt"; then
    echo "installing the pinned reference packages into $venv" >&2
    "$venv/bin/python" -m pip install --quiet --disable-pip-version-check -r "$requirements"
    cp "$requirements" "$venv/installed-requirements.txt"
fi
