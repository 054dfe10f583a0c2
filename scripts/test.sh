#!/usr/bin/env bash
# npm test: every test runner against throwaway services; the last line printed is exactly
# `tests: N passed, N failed` and the exit status is non-zero on any failure.
#
#   1. Debian packages and node_modules, if missing (side by side)
#   2. PostgreSQL, Redis, the SMTP fake and the S3 fake in a temporary dir (removed at exit), on
#      free ports near 25433 / 26380 / 22525 / 22526 / 25690 (web 23000), below the kernel's
#      ephemeral ports (32768 and up), which outgoing connections take at any moment; override with
#      LAMINA_TEST_*_PORT (…_PG_, _REDIS_, _SMTP_, _MAILBOX_, _WEB_, _S3_PORT)
#   3. migrations, then vitest (all projects: unit, reference, integration)
#   4. meanwhile, in the background (they need nothing from vitest): a second database for the e2e
#      tests (migrations and the demo seed; they sign in as demo users) and `next build` into
#      .next-test (a running `npm start` keeps its .next); their output goes to logs/ and is
#      printed when vitest is done
#   5. the web server and the worker on the e2e database, then Playwright in Debian's Chromium
#   6. the scale test's short form (scripts/scale-test.ts --short: haproxy, two instances of the
#      build, two workers, 200 reminders; its checks are counted like tests)
#   7. everything stopped, then scripts/summarize-tests.mjs sums every runner's JSON report
#
# Service logs of a failed run are copied to test-results/logs/.
set -euo pipefail

cd "$(dirname "${BASH_SOURCE[0]}")/.."
# shellcheck source=lib/services.sh
source scripts/lib/services.sh

export CI=true
lamina_throwaway_env test 25433 26380 22525 23000 LAMINA_TEST 25690
TMP="$LAMINA_DATA"

RESULTS="$TMP/results"
MANIFEST="$RESULTS/manifest.tsv"
mkdir -p "$RESULTS"
FINISHED=0
T0=$SECONDS

# record KIND NAME [EXIT] [FILE]: a line of the manifest read by summarize-tests.mjs.
record() { printf '%s\t%s\t%s\t%s\n' "$1" "$2" "${3:-}" "${4:-}" >>"$MANIFEST"; }

banner() { printf '\n==> %s\n' "$*" >&2; }

# step NAME CMD...: a set-up step, run with `set -e` in a subshell (so that lamina_die ends only
# the step), timed and recorded; its status is left in STEP_RC. Call it as a plain statement,
# never as `step ... || ...`: bash ignores `set -e` inside anything run as a condition.
STEP_RC=0
step() {
  local name="$1" t0=$SECONDS
  shift
  banner "$name"
  set +e
  (set -e; "$@")
  STEP_RC=$?
  set -e
  record step "$name" "$STEP_RC"
  if ((STEP_RC == 0)); then lamina_log "$name: ok ($((SECONDS - t0)) s)"; else lamina_log "$name: FAILED (exit $STEP_RC)"; fi
}
ok() { ((STEP_RC == 0)); }

# runner NAME JSONFILE CMD...: a test runner; its failures are counted, never fatal here.
runner() {
  local name="$1" file="$2" t0=$SECONDS rc
  shift 2
  banner "$name"
  set +e
  "$@" </dev/null
  rc=$?
  set -e
  record runner "$name" "$rc" "$file"
  lamina_log "$name: exit $rc ($((SECONDS - t0)) s)"
}

# The e2e tests run on a database of their own, so that it can be seeded while vitest uses the first.
E2E_DB_NAME=lamina_e2e
reset_database() {
  pg_recreate_database "$E2E_DB_NAME"
  export DATABASE_URL="${DATABASE_URL%/*}/$E2E_DB_NAME"
  lamina_migrate
  # MikroORM's migrator leaves a schema snapshot named after the database: not ours to keep.
  rm -f "$LAMINA_REPO/migrations/.snapshot-$E2E_DB_NAME.json"
  lamina_seed
}

# bg_step NAME CMD...: `step` in the background, its output in $TMP/logs/<slug>.log; the pid in
# BG_PID. await_step NAME PID: wait for it, print its output, record it; STEP_RC as `step`.
BG_PID=
BG_PIDS=()
bg_step() {
  local name="$1" log t0=$SECONDS
  shift
  log="$TMP/logs/$(printf '%s' "$name" | tr -c 'a-zA-Z0-9' '-').log"
  lamina_log "$name: started in the background (output: $log)"
  (
    set +e
    (set -e; "$@") </dev/null >"$log" 2>&1
    rc=$?
    echo "$rc $((SECONDS - t0))" >"$log.rc"
    exit "$rc"
  ) &
  BG_PID=$!
  BG_PIDS+=("$BG_PID")
}
# kill_tree PID: a background step and what it started (an interrupted run).
kill_tree() {
  local child
  for child in $(pgrep -P "$1" 2>/dev/null); do kill_tree "$child"; done
  kill "$1" 2>/dev/null || true
}
await_step() {
  local name="$1" pid="$2" log rc secs
  log="$TMP/logs/$(printf '%s' "$name" | tr -c 'a-zA-Z0-9' '-').log"
  wait "$pid" 2>/dev/null || true
  local left=() p
  for p in "${BG_PIDS[@]}"; do [[ "$p" == "$pid" ]] || left+=("$p"); done
  BG_PIDS=("${left[@]}")
  banner "$name (ran in the background)"
  cat "$log" >&2 2>/dev/null || true
  read -r rc secs <"$log.rc" 2>/dev/null || { rc=1; secs=?; }
  STEP_RC=$rc
  record step "$name" "$STEP_RC"
  if ((STEP_RC == 0)); then lamina_log "$name: ok ($secs s, in the background)"; else lamina_log "$name: FAILED (exit $STEP_RC)"; fi
}

# http_answers URL: the server sent any HTTP response (a redirect or an error page counts).
http_answers() {
  node -e 'fetch(process.argv[1], { redirect: "manual", signal: AbortSignal.timeout(3000) }).then(() => {}, () => process.exit(1))' "$1"
}

# The e2e phase writes .next-test in the checkout: one `npm test` at a time may hold it.
lock_e2e() {
  local lock
  lock="/tmp/lamina-e2e-$(printf '%s' "$LAMINA_REPO" | sha1sum | cut -c1-12).lock"
  exec 9>"$lock"
  if ! flock -n 9; then
    lamina_log "another npm test in this checkout is in its e2e phase; waiting for it"
    flock -w 1800 9 || lamina_die "gave up waiting for the e2e lock $lock"
  fi
}
unlock_e2e() { flock -u 9 2>/dev/null || true; exec 9>&-; }

build() { NEXT_DIST_DIR=.next-test node_modules/.bin/next build; }

# The scale test's short form runs after Playwright on the same build, unless LAMINA_SKIP_SCALE=1,
# or LAMINA_PW_ARGS narrows the e2e run (then LAMINA_SCALE=1 asks for it anyway).
scale_wanted() {
  [[ "${LAMINA_SKIP_SCALE:-}" != 1 ]] || return 1
  [[ -z "${LAMINA_PW_ARGS:-}" || "${LAMINA_SCALE:-}" == 1 ]]
}

# start_web: the web server (scripts/web-server.mjs: Next behind Lamina's HTTP server) and the worker, each in a process group of its own
# (setsid) so that stopping it stops anything it spawned. Runs inside a step's subshell, so the
# pids go to files.
start_web() {
  # The port was free when the run began, minutes ago: another run may have taken it since.
  require_free_port "$LAMINA_WEB_PORT" "the web server" LAMINA_TEST_WEB_PORT
  (NODE_OPTIONS="${NODE_OPTIONS:+$NODE_OPTIONS }${LAMINA_WEB_NODE_OPTIONS:-}" NEXT_DIST_DIR=.next-test \
    exec setsid node scripts/web-server.mjs -H 127.0.0.1 -p "$LAMINA_WEB_PORT" \
    </dev/null >"$TMP/logs/web.log" 2>&1 9>&-) &
  local web=$!
  echo "$web" >"$TMP/run/web.pid"
  # The scripts tsconfig maps `server-only` to an empty module outside Next (see jobs/worker.ts).
  (TSX_TSCONFIG_PATH=scripts/tsconfig.json exec setsid node --import tsx jobs/worker.ts </dev/null >"$TMP/logs/worker.log" 2>&1 9>&-) &
  echo $! >"$TMP/run/worker.pid"
  wait_for_launch 60 "$web" "the web server" "$TMP/logs/web.log" http_answers "$APP_URL/"
  lamina_log "web server answering at $APP_URL"
}

stop_app() {
  local name
  for name in worker web; do stop_pidfile "$TMP/run/$name.pid" "$name" 10 || true; done
}

stop_everything() {
  local pid
  for pid in "${BG_PIDS[@]}"; do kill_tree "$pid"; done
  stop_app 2>/dev/null || true
  services_stop 2>/dev/null || true
}

# finish: stop everything, keep the logs of a failed run, and print the summary last.
finish() {
  local rc
  ((FINISHED)) && return 0
  FINISHED=1
  trap - INT TERM
  stop_everything
  lamina_log "npm test took $((SECONDS - T0)) s"
  set +e
  node scripts/summarize-tests.mjs "$MANIFEST" >"$RESULTS/summary.txt" 2>&1
  rc=$?
  set -e
  if ((rc != 0)); then
    rm -rf test-results/logs
    mkdir -p test-results
    cp -r "$TMP/logs" test-results/logs 2>/dev/null && echo "service logs of this run: test-results/logs/" >&2
  fi
  # Every runner's JSON report (per-file and per-test durations) and the step times stay in
  # test-results/run/ for measuring where the minutes go.
  rm -rf test-results/run
  mkdir -p test-results/run
  cp "$RESULTS"/*.json "$MANIFEST" test-results/run/ 2>/dev/null || true
  cp "$TMP"/logs/*.log test-results/run/ 2>/dev/null || true
  echo
  cat "$RESULTS/summary.txt"
  rm -rf "$TMP"
  return "$rc"
}

on_exit() {
  local rc=$?
  trap - EXIT
  if ((!FINISHED)); then
    ((rc == 0)) || record step "npm test (interrupted or crashed, exit $rc)" "$rc"
    finish || rc=$?
  fi
  rm -rf "$TMP"
  exit "$rc"
}

main() {
  trap on_exit EXIT
  trap 'exit 130' INT
  trap 'exit 143' TERM
  record expect vitest
  [[ -n "${LAMINA_SKIP_E2E:-}" ]] || record expect playwright
  [[ -n "${LAMINA_SKIP_E2E:-}" ]] || ! scale_wanted || record expect scale-test

  # npm ci needs nothing from apt (Node, python3, make and g++ come with the machine): on a fresh
  # machine the two downloads run side by side.
  mkdir -p "$TMP/logs"
  bg_step "node modules" ensure_node_modules
  local modules_pid=$BG_PID apt_rc
  step "Debian packages" ensure_apt_packages "${LAMINA_APT_BASE[@]}" "${LAMINA_APT_TEST[@]}"
  apt_rc=$STEP_RC
  await_step "node modules" "$modules_pid"
  ((apt_rc == 0)) || STEP_RC=$apt_rc
  ok || { finish; return; }

  # What the app reads (lib/env.ts), for every step. vitest runs with NODE_ENV=test.
  lamina_export_env
  export NODE_ENV=production
  NEXTAUTH_SECRET="$(random_secret)"
  export NEXTAUTH_SECRET
  export E2E_BASE_URL="$APP_URL"
  # The tests read outcomes right after writing: no lag (lib/env.ts OUTCOMES_MAX_LAG_MS; its own test
  # in tests/integration/outcomes-refresh.test.ts).
  export OUTCOMES_MAX_LAG_MS=0
  # …and count the desk's queues right after writing (lib/env.ts DESK_COUNTS_MAX_AGE_MS; kept counts:
  # tests/unit/recall/kept-counts.test.ts and tests/integration/recall-desk.test.ts).
  export DESK_COUNTS_MAX_AGE_MS=0
  lamina_log "ports: web $LAMINA_WEB_PORT, PostgreSQL $LAMINA_PG_PORT, Redis $LAMINA_REDIS_PORT, SMTP $LAMINA_SMTP_PORT, mailbox $LAMINA_MAILBOX_PORT, S3 $LAMINA_S3_PORT; data $TMP"

  step "start services" services_start
  ok || { finish; return; }
  step "migrate" lamina_migrate
  ok || { finish; return; }

  # The e2e preparation does not wait for vitest: the seed goes to its own database, the build
  # to .next-test (behind the checkout's e2e lock).
  local seed_pid='' build_pid=''
  if [[ -z "${LAMINA_SKIP_E2E:-}" ]]; then
    bg_step "fresh e2e database, migrations and demo seed" reset_database
    seed_pid=$BG_PID
    lock_e2e
    bg_step "next build" build
    build_pid=$BG_PID
  fi

  # LAMINA_VITEST_ARGS / LAMINA_PW_ARGS narrow the runs to some files while developing;
  # LAMINA_SKIP_E2E=1 stops after vitest. CI sets none of them.
  # shellcheck disable=SC2086
  runner vitest "$RESULTS/vitest.json" env NODE_ENV=test node_modules/.bin/vitest run --config tests/vitest.config.ts \
    --reporter=default --reporter=json --outputFile.json="$RESULTS/vitest.json" ${LAMINA_VITEST_ARGS:-}
  if [[ -n "${LAMINA_SKIP_E2E:-}" ]]; then finish; return; fi

  await_step "fresh e2e database, migrations and demo seed" "$seed_pid"
  local seeded=$STEP_RC
  await_step "next build" "$build_pid"
  ((seeded == 0)) || STEP_RC=$seeded
  # The web server, the worker and Playwright use the e2e database.
  export DATABASE_URL="${DATABASE_URL%/*}/$E2E_DB_NAME"
  if ok; then step "start the web server" start_web; fi
  if ok; then
    runner playwright "$RESULTS/playwright.json" env PLAYWRIGHT_JSON_FILE="$RESULTS/playwright.json" \
      node_modules/.bin/playwright test --config tests/playwright.config.ts ${LAMINA_PW_ARGS:-}
  fi
  stop_app
  # The scale test's short form (issue 15): haproxy, two instances of this build, two workers.
  if ok && scale_wanted; then
    runner scale-test "$RESULTS/scale-test.json" env NEXT_DIST_DIR=.next-test TSX_TSCONFIG_PATH=scripts/tsconfig.json \
      node --import tsx scripts/scale-test.ts --short --report "$RESULTS/scale-test.json"
  fi
  unlock_e2e
  finish
}

main "$@"
