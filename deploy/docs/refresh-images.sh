#!/usr/bin/env bash
# Refresh the README's images (deploy/docs/board.png, deploy/docs/report.png). The browser tests
# draw them into test-artifacts/docs/ on every run (tests never write outside test-artifacts/);
# this script runs just those tests on a fresh build and copies the two images here.
# Usage: npm run docs:images   (needs /usr/bin/chromium, like npm run test:browser)
set -euo pipefail
cd "$(dirname "$0")/../.."
npm run build --silent
rm -f test-artifacts/docs/board.png test-artifacts/docs/report.png
npx vitest run --project browser test/browser/board.test.ts test/browser/report.test.ts
cp test-artifacts/docs/board.png test-artifacts/docs/report.png deploy/docs/
echo "refreshed deploy/docs/board.png and deploy/docs/report.png; review them, then commit"
