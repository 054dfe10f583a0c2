#!/usr/bin/env bash
# npm run scale-test: Lamina scaled out on loopback (issue 15). Throwaway PostgreSQL, Redis, SMTP
# fake and S3 fake (scripts/lib/services.sh), migrations, a build in .next-scale (skipped when the
# sources did not change; LAMINA_BUILD=always forces it), then scripts/scale-test.ts: haproxy in
# front of two web instances, two workers, and the checks. Exit status non-zero on any failure.
#
#   npm run scale-test [-- --short] [-- --reminders 2000 --kill-reminders 1000] [-- --workers-only]
#
# Ports as npm test chooses them (free from 25733 / 26680 / 22825 / 23300 / 25990; the web port is
# haproxy's), or fixed with LAMINA_TEST_*_PORT. Logs of a failed run go to test-results/scale-logs/.
set -euo pipefail

cd "$(dirname "${BASH_SOURCE[0]}")/.."
# shellcheck source=lib/services.sh
source scripts/lib/services.sh

lamina_throwaway_env scale 25733 26680 22825 23300 LAMINA_TEST 25990

cleanup() {
  local rc=$?
  services_stop 2>/dev/null || true
  if ((rc != 0)); then
    rm -rf test-results/scale-logs && mkdir -p test-results && cp -r "$LAMINA_DATA/logs" test-results/scale-logs 2>/dev/null &&
      echo "scale-test: logs of this run in test-results/scale-logs/" >&2
  fi
  rm -rf "$LAMINA_DATA"
  exit "$rc"
}
trap cleanup EXIT
trap 'exit 130' INT
trap 'exit 143' TERM

ensure_apt_packages "${LAMINA_APT_BASE[@]}" haproxy
ensure_node_modules
lamina_export_env
export NODE_ENV=production CI=true
NEXTAUTH_SECRET="$(random_secret)"
export NEXTAUTH_SECRET
services_start
lamina_migrate
export NEXT_DIST_DIR="${LAMINA_SCALE_DIST_DIR:-.next-scale}"
[[ " $* " == *" --workers-only "* ]] || build_if_needed "$NEXT_DIST_DIR"
TSX_TSCONFIG_PATH=scripts/tsconfig.json node --import tsx scripts/scale-test.ts "$@"
