# Times R's survival on the data written by scripts/bench/stats.ts.
# Usage: Rscript scripts/bench/stats.R <data.csv> [repeats]
# Prints one line of JSON: seconds (least elapsed and least CPU of the repeats, excluding
# reading the file) and a
# few results so the caller can check both sides fitted the same data.
suppressPackageStartupMessages(library(survival))
f <- commandArgs(trailingOnly = TRUE)[1]
d <- read.csv(f, colClasses = c("numeric", "integer", "character", "numeric", "numeric"))
reps <- as.integer(commandArgs(trailingOnly = TRUE)[2])
if (is.na(reps)) reps <- 1L
# best (least) elapsed time of `reps` runs, as on the Lamina side
el <- function(f) {
  best <- Inf
  cpu <- Inf
  for (i in seq_len(reps)) {
    st <- system.time(v <- f())
    best <- min(best, st[["elapsed"]])
    cpu <- min(cpu, st[["user.self"]] + st[["sys.self"]])
  }
  list(t = best, cpu = cpu, v = v)
}
km <- el(function() survfit(Surv(time, status) ~ 1, data = d))
lr <- el(function() survdiff(Surv(time, status) ~ grp, data = d))
cx <- el(function() coxph(Surv(time, status) ~ x1 + x2, data = d))
g <- function(x) formatC(x, digits = 17, format = "g")
cat(sprintf("{\"version\":\"%s / survival %s\",\"km\":%s,\"logRank\":%s,\"cox\":%s,\"cpu\":[%s,%s,%s],\"kmRows\":%d,\"kmLast\":%s,\"chiSquare\":%s,\"coef\":[%s,%s]}\n",
  R.version.string, as.character(packageVersion("survival")), g(km$t), g(lr$t), g(cx$t), g(km$cpu), g(lr$cpu), g(cx$cpu),
  length(km$v$time), g(km$v$surv[length(km$v$surv)]), g(lr$v$chisq), g(coef(cx$v)[1]), g(coef(cx$v)[2])))
