# Sourced by demo.sh and test.sh: make sure the project's virtual environment .venv exists and
# holds this checkout installed with the test extra; create and fill it on first use, and fill it
# again when pyproject.toml has changed since (its hash is kept in .venv/orcscreen-installed).
set -euo pipefail
root="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
cd "$root"
python=${PYTHON:-python3}
if ! "$python" -c 'import sys; sys.exit(sys.version_info < (3, 11))' 2>/dev/null; then
    echo "orcscreen needs Python 3.11 or newer; '$python' is $("$python" --version 2>&1 || echo missing)." >&2
    echo "Set PYTHON to a newer interpreter, e.g. PYTHON=python3.11 $0" >&2
    exit 2
fi
stamp=".venv/orcscreen-installed"
want="$(sha256sum pyproject.toml | cut -d' ' -f1) ${ORCSCREEN_EXTRAS:-test}"
if [ ! -x .venv/bin/python ] || [ "$(cat "$stamp" 2>/dev/null)" != "$want" ]; then
    echo "setting up .venv (first use, or pyproject.toml changed): a minute or two" >&2
    [ -x .venv/bin/python ] || "$python" -m venv .venv
    .venv/bin/python -m pip install -q --upgrade pip
    .venv/bin/python -m pip install -q -e ".[${ORCSCREEN_EXTRAS:-test}]"
    echo "$want" > "$stamp"
fi
