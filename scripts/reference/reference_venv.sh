# Sourced by the scripts that run the pinned numpy/scipy (POSIX sh; needs `repo` set to the
# repository root): sets `venv` to REDRESS_REFERENCE_VENV (default .venv-reference at the root)
# and creates it from requirements.txt when missing.
venv=${REDRESS_REFERENCE_VENV:-"$repo/.venv-reference"}
if [ ! -x "$venv/bin/python" ]; then
    echo "creating $venv with the pinned numpy and scipy" >&2
    python3 -m venv "$venv"
    "$venv/bin/python" -m pip install --quiet --disable-pip-version-check \
        -r "$repo/scripts/reference/requirements.txt"
fi
