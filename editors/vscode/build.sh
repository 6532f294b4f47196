#!/usr/bin/env bash
# Package the VS Code extension: editors/vscode/dist/pactlang-deal.vsix.
# Installs the exact dependency versions of package-lock.json (the language
# client, and vsce to package) from the npm registry, then packages. The
# .vsix carries the client and its dependencies, not vsce.
set -euo pipefail
cd "$(dirname "$0")"
npm ci --no-audit --no-fund
mkdir -p dist
npx --no-install vsce package --allow-missing-repository --skip-license --out dist/pactlang-deal.vsix
echo "packaged $(pwd)/dist/pactlang-deal.vsix"
