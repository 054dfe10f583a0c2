#!/usr/bin/env bash
# npm run bench [-- NAME...]: run every benchmark under scripts/bench/ (*.ts, with tsx), or
# only those whose file name contains one of NAME, and print their output.
#
# Benchmarks get throwaway services like npm test: PostgreSQL (migrated), Redis, the SMTP
# fake and the S3 fake in a temporary dir on free ports, with DATABASE_URL, REDIS_URL, SMTP_URL,
# MAILBOX_URL and S3_URL exported, plus R and Python (for reference figures) installed. Everything is stopped and
# removed at exit. Exits non-zero if any benchmark failed. Ports are free ones from fixed bases, or
# as given in LAMINA_TEST_PG_PORT … LAMINA_TEST_S3_PORT (as for npm test). A benchmark whose file says
# "bench: needs the production build" (the load bench) gets `next build` into .next-bench (skipped
# when the sources did not change; LAMINA_BUILD=always forces it), with NEXT_DIST_DIR exported.
# A benchmark whose file says "bench: runs as the web server" (the outcomes bench, which calls the
# route handlers' services in its own process) runs with the web server's Node options
# (LAMINA_WEB_NODE_OPTIONS, scripts/lib/services.sh), so its collector behaves as the server's.
set -euo pipefail

cd "$(dirname "${BASH_SOURCE[0]}")/.."
# shellcheck source=lib/services.sh
source scripts/lib/services.sh

shopt -s nullglob
benches=()
for file in scripts/bench/*.ts; do
  if (($# == 0)); then benches+=("$file"); continue; fi
  for want in "$@"; do
    [[ "$(basename "$file")" == *"$want"* ]] && { benches+=("$file"); break; }
  done
done
if ((${#benches[@]} == 0)); then
  echo "bench: no benchmark under scripts/bench/${*:+ matching $*}" >&2
  exit 1
fi

lamina_throwaway_env bench 25533 26480 22625 23100 LAMINA_TEST 25790

cleanup() {
  services_stop 2>/dev/null || true
  rm -rf "$LAMINA_DATA"
}
trap cleanup EXIT
trap 'exit 130' INT
trap 'exit 143' TERM

ensure_apt_packages "${LAMINA_APT_BASE[@]}" "${LAMINA_APT_TEST[@]}"
ensure_node_modules
lamina_export_env
export NODE_ENV=production CI=true
NEXTAUTH_SECRET="$(random_secret)"
export NEXTAUTH_SECRET
services_start
if [[ "${LAMINA_PG_OPTS:-}" == *pg_stat_statements* ]]; then
  # The reminders bench reads it (BENCH_PG_STATEMENTS=1); creating it needs the superuser.
  pg_psql -d "$LAMINA_DB_NAME" -c 'create extension if not exists pg_stat_statements'
fi
lamina_migrate
if grep -l 'bench: needs the production build' "${benches[@]}" >/dev/null; then
  export NEXT_DIST_DIR="${LAMINA_BENCH_DIST_DIR:-.next-bench}"
  build_if_needed "$NEXT_DIST_DIR"
fi

failed=()
for file in "${benches[@]}"; do
  printf '\n==> %s\n' "$file"
  t0=$SECONDS
  node_options="${NODE_OPTIONS:-}"
  if grep -q 'bench: runs as the web server' "$file"; then node_options="$node_options ${LAMINA_WEB_NODE_OPTIONS:-}"; fi
  if NODE_OPTIONS="$node_options" node_modules/.bin/tsx "$file" </dev/null; then
    echo "(${file}: $((SECONDS - t0)) s)"
  else
    rc=$?
    echo "(${file}: FAILED, exit $rc, after $((SECONDS - t0)) s)"
    failed+=("$file")
  fi
done

echo
if ((${#failed[@]})); then
  echo "bench: ${#benches[@]} run, ${#failed[@]} failed: ${failed[*]}"
  exit 1
fi
echo "bench: ${#benches[@]} run, 0 failed"
