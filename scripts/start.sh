#!/usr/bin/env bash
# npm start: set up everything on this machine and run Lamina with demo data.
#
#   1. Debian packages and node_modules, if missing
#   2. PostgreSQL, Redis and the SMTP fake on loopback, data under .data/ (reused on a second run)
#   3. migrations, the demo seed (idempotent), `next build` (skipped when nothing changed)
#   4. scripts/supervise.ts: runs the web server (and the worker), restarts what crashes, prints
#      the URL and demo sign-ins, and on Ctrl-C stops everything it started.
#
# Ports (override with the variable): web LAMINA_WEB_PORT=3000, PostgreSQL LAMINA_PG_PORT=54320,
# Redis LAMINA_REDIS_PORT=63790, SMTP LAMINA_SMTP_PORT=2525, mailbox LAMINA_MAILBOX_PORT=2526,
# S3 fake (films, objects in .data/s3) LAMINA_S3_PORT=4569.
# LAMINA_BUILD=always rebuilds even when the sources did not change.
set -euo pipefail

cd "$(dirname "${BASH_SOURCE[0]}")/.."
# shellcheck source=lib/services.sh
source scripts/lib/services.sh
export LAMINA_PROFILE=start
lamina_defaults

# timed NAME CMD...: run a step and say how long it took.
timed() {
  local name="$1" t0=$SECONDS
  shift
  "$@"
  lamina_log "$name done ($((SECONDS - t0)) s)"
}

# A second `npm start` while one is running would fight over the ports.
refuse_if_running() {
  local pid
  if pid="$(read_pidfile "$LAMINA_DATA/run/supervisor.pid")" && [[ "$(pid_cmdline "$pid")" == *supervise.ts* ]]; then
    lamina_die "Lamina is already running (supervisor pid $pid) at http://127.0.0.1:$LAMINA_WEB_PORT.
       Stop it with Ctrl-C in its terminal, or: kill $pid"
  fi
}

# Children of a supervisor that was killed with SIGKILL outlive it; stop them.
stop_leftover_children() {
  local name pid
  for name in web worker; do
    if pid="$(read_pidfile "$LAMINA_DATA/run/$name.pid")"; then
      if [[ "$(pid_cmdline "$pid")" == *web-server* || "$(pid_cmdline "$pid")" == *worker* ]]; then
        lamina_log "stopping the $name left over from an earlier run (pid $pid)"
        stop_pid "$pid" "$name"
      fi
      rm -f "$LAMINA_DATA/run/$name.pid"
    fi
  done
}

# The seed prints the demo sign-ins; keep its output for the banner.
run_seed() { lamina_seed >"$LAMINA_SEED_OUTPUT"; }

# Until the supervisor takes over, a failure or Ctrl-C stops the services started so far.
on_setup_exit() {
  local rc=$?
  trap - EXIT INT TERM
  if ((rc != 0)); then
    lamina_log "set-up failed or was interrupted; stopping the services (logs: $LAMINA_DATA/logs)"
    services_stop
  fi
  exit "$rc"
}

main() {
  local t0=$SECONDS
  refuse_if_running
  stop_leftover_children
  trap on_setup_exit EXIT
  trap 'exit 130' INT
  trap 'exit 143' TERM

  ensure_apt_packages "${LAMINA_APT_BASE[@]}"
  ensure_node_modules

  # Fail before the slow steps if the web port is taken.
  require_free_port "$LAMINA_WEB_PORT" "the web server" LAMINA_WEB_PORT

  NEXTAUTH_SECRET="$(ensure_secret "$LAMINA_DATA/secret")"
  export NEXTAUTH_SECRET NODE_ENV=production
  export LAMINA_SEED_OUTPUT="$LAMINA_DATA/run/seed-output.txt"
  lamina_export_env

  timed "services" services_start
  timed "migrations" lamina_migrate
  timed "demo seed" run_seed
  timed "build" build_if_needed .next
  lamina_log "set-up took $((SECONDS - t0)) s; starting the web server"

  trap - EXIT INT TERM
  # The supervisor starts the worker with `node --import tsx jobs/worker.ts`; the scripts tsconfig
  # maps `server-only` to an empty module outside Next.
  export TSX_TSCONFIG_PATH=scripts/tsconfig.json
  exec node --import tsx scripts/supervise.ts
}

main "$@"
