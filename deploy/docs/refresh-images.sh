#!/usr/bin/env bash
# Refresh the README's images (deploy/docs/*.png, *.svg). The browser tests draw the screenshots
# and test/unit/tuning/profile-e2e.test.ts the daily-profile figure into test-artifacts/docs/ on
# every run (tests never write outside test-artifacts/); this script runs just those tests on a
# fresh build and copies the images here.
# Usage: npm run docs:images   (needs /usr/bin/chromium, like npm run test:browser)
set -euo pipefail
cd "$(dirname "$0")/../.."
IMAGES=(board.png board-groups.png report.png report-health.png report-tradeoff.png profile-comparison.svg)
npm run build --silent
for image in "${IMAGES[@]}"; do rm -f "test-artifacts/docs/$image"; done
npx vitest run --project browser test/browser/board.test.ts test/browser/board-groups.test.ts test/browser/report.test.ts
npx vitest run --project unit test/unit/tuning/profile-e2e.test.ts
for image in "${IMAGES[@]}"; do cp "test-artifacts/docs/$image" deploy/docs/; done
echo "refreshed deploy/docs/: ${IMAGES[*]}; review them, then commit"
