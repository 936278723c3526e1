#!/usr/bin/env bash
# Run the demo study end to end (creates and fills .venv on first use); writes out/demo/.
# Extra arguments go to `orcscreen run`, e.g. scripts/demo.sh --jobs 1
source "$(dirname "${BASH_SOURCE[0]}")/env.sh"
exec .venv/bin/orcscreen run studies/demo.toml --out out/demo "$@"
