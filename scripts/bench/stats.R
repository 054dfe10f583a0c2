# Times R's survival on the data written by scripts/bench/stats.ts.
# Usage: Rscript scripts/bench/stats.R <data.csv> [repeats] [rows above which R's Turnbull and cumulative incidence are not run]
# Prints one line of JSON: seconds (least elapsed and least CPU of the repeats, excluding
# reading the file) and a
# few results so the caller can check both sides fitted the same data.
suppressPackageStartupMessages({
  library(survival)
  library(sandwich)
})
f <- commandArgs(trailingOnly = TRUE)[1]
d <- read.csv(f, colClasses = c("numeric", "integer", "character", "numeric", "numeric", "integer", "character", "integer", "integer", "numeric", "numeric"))
reps <- as.integer(commandArgs(trailingOnly = TRUE)[2])
if (is.na(reps)) reps <- 1L
# R's Turnbull and cumulative incidence (both grow faster than linearly) run once, and only up to this many rows
slowMax <- as.numeric(commandArgs(trailingOnly = TRUE)[3])
if (is.na(slowMax)) slowMax <- 1e5
# best (least) elapsed time of `reps` runs, as on the Lamina side
el <- function(f, times = reps) {
  best <- Inf
  cpu <- Inf
  for (i in seq_len(times)) {
    st <- system.time(v <- f())
    best <- min(best, st[["elapsed"]])
    cpu <- min(cpu, st[["user.self"]] + st[["sys.self"]])
  }
  list(t = best, cpu = cpu, v = v)
}
km <- el(function() survfit(Surv(time, status) ~ 1, data = d))
lr <- el(function() survdiff(Surv(time, status) ~ grp, data = d))
cx <- el(function() coxph(Surv(time, status) ~ x1 + x2, data = d))
# issue 11: Turnbull, cumulative incidence, Cox with clusters, logistic with cluster-robust errors,
# stratified log-rank, funnel limits
tb <- if (nrow(d) <= slowMax) el(function() survfit(Surv(left, right, type = "interval2") ~ 1, data = d), 1L) else NULL
d$causeF <- factor(d$cause, levels = c(0, 1, 2))
ci <- if (nrow(d) <= slowMax) el(function() survfit(Surv(time, causeF) ~ 1, data = d), 1L) else NULL
cc <- el(function() coxph(Surv(time, status) ~ x1 + x2, data = d, cluster = cl))
lg <- el(function() {
  fit <- glm(y ~ x1 + x2, family = binomial, data = d)
  list(fit = fit, v = vcovCL(fit, cluster = ~cl, type = "HC1"))
})
st <- el(function() survdiff(Surv(time, status) ~ grp + strata(s), data = d))
limit <- function(p, n, p0) {
  r <- qbinom(p, n, p0)
  a <- (pbinom(r, n, p0) - p) / (pbinom(r, n, p0) - pbinom(r - 1, n, p0))
  min(1, max(0, (r - a) / n))
}
fu <- el(function() c(limit(0.001, nrow(d), 0.85), limit(0.999, nrow(d), 0.85)))
g <- function(x) if (is.null(x) || length(x) == 0) "null" else formatC(x, digits = 17, format = "g")
gl <- function(x) paste0("[", paste(vapply(x, g, ""), collapse = ","), "]")
pst <- if (is.null(ci)) NULL else ci$v$pstate[, match("1", ci$v$states)]
ext <- sprintf("{\"s\":%s,\"cpu\":%s,\"tbLast\":%s,\"ciLast\":%s,\"coxRobust\":%s,\"logitRobust\":%s,\"strataChi\":%s,\"funnel\":%s}",
  gl(list(tb$t, ci$t, cc$t, lg$t, st$t, fu$t)),
  gl(list(tb$cpu, ci$cpu, cc$cpu, lg$cpu, st$cpu, fu$cpu)),
  if (is.null(tb)) "null" else g(tb$v$surv[length(tb$v$surv)]), if (is.null(pst)) "null" else g(pst[length(pst)]),
  gl(as.list(sqrt(diag(cc$v$var)))), gl(as.list(sqrt(diag(lg$v$v)))), g(st$v$chisq), gl(as.list(fu$v)))
cat(sprintf("{\"version\":\"%s / survival %s / sandwich %s\",\"km\":%s,\"logRank\":%s,\"cox\":%s,\"cpu\":[%s,%s,%s],\"kmRows\":%d,\"kmLast\":%s,\"chiSquare\":%s,\"coef\":[%s,%s],\"ext\":%s}\n",
  R.version.string, as.character(packageVersion("survival")), as.character(packageVersion("sandwich")), g(km$t), g(lr$t), g(cx$t), g(km$cpu), g(lr$cpu), g(cx$cpu),
  length(km$v$time), g(km$v$surv[length(km$v$surv)]), g(lr$v$chisq), g(coef(cx$v)[1]), g(coef(cx$v)[2]), ext))
