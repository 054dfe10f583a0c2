# Reference values for Lamina's interval-censored, competing-risk, clustered,
# stratified, logistic and funnel-limit statistics (issue 11).
# Usage: Rscript extensions-reference.R <dir>
# <dir> holds turnbull.csv (id,left,right; right NA = right-censored),
# cif.csv (id,time,status; status 0 = censored, else the cause),
# cox.csv (id,ties,time,status,x1,x2,cl), logistic.csv (id,y,x1,x2,cl; cl NA = no clusters),
# strata.csv (id,time,status,grp,s) and funnel.csv (p0,n,coverage).
# Writes <dir>/r.json by hand (jsonlite is not assumed), numbers at 17 digits.
suppressPackageStartupMessages({
  library(survival)
  library(sandwich)
  library(cmprsk)
})
args <- commandArgs(trailingOnly = TRUE)
dir <- args[1]
rd <- function(f) read.csv(file.path(dir, f), stringsAsFactors = FALSE)
num <- function(x) {
  x <- as.numeric(x)
  if (length(x) == 0) return("[]")
  s <- ifelse(is.na(x), "null", formatC(x, digits = 17, format = "g"))
  s <- gsub(" ", "", s)
  paste0("[", paste(s, collapse = ","), "]")
}
str <- function(x) paste0("[", paste(sprintf("\"%s\"", x), collapse = ","), "]")
obj <- function(l) paste0("{", paste(sprintf("\"%s\":%s", names(l), unlist(l)), collapse = ","), "}")
arr <- function(items) paste0("[", paste(unlist(items), collapse = ","), "]")

# ---- Turnbull: survfit(Surv(left, right, type = "interval2") ~ 1) as it is, and R's own
# algorithm (survival:::survfitTurnbull) with its stopping threshold lowered from 5e-5 to 1e-9,
# both as step functions (time, surv), plus each one's log-likelihood on the data.
tightTurnbull <- local({
  src <- deparse(survival:::survfitTurnbull)
  hit <- grepl("5e-05", src, fixed = TRUE)
  if (sum(hit) != 1) stop("survfitTurnbull's stopping threshold 5e-05 not found once; the survival package changed")
  src <- sub("5e-05", "1e-09", src, fixed = TRUE)
  f <- eval(parse(text = src))
  environment(f) <- asNamespace("survival")
  f
})
loglik <- function(time, surv, l, r) {
  S <- stepfun(time, c(1, surv))
  Sminus <- function(t) { k <- time < t; if (any(k)) S(max(time[k])) else 1 }
  p <- vapply(seq_along(l), function(i) {
    if (is.na(r[i])) S(l[i]) else if (l[i] == r[i]) Sminus(l[i]) - S(l[i]) else S(l[i]) - S(r[i])
  }, 0)
  sum(log(p))
}
tb <- rd("turnbull.csv")
tbOut <- lapply(unique(tb$id), function(id) {
  d <- tb[tb$id == id, ]
  y <- Surv(d$left, d$right, type = "interval2")
  f <- survfit(y ~ 1)
  t <- tightTurnbull(factor(rep(1, nrow(d))), y, weights = rep(1, nrow(d)), conf.type = "none", se.fit = FALSE)
  # exact times and right-censoring only: the Kaplan-Meier curve, which the NPMLE is
  exact <- !is.na(d$right) & d$left == d$right
  km <- if (all(exact | is.na(d$right))) survfit(Surv(d$left, as.integer(exact)) ~ 1) else list(time = numeric(0), surv = numeric(0))
  obj(list(id = sprintf("\"%s\"", id), kmTime = num(km$time), kmSurv = num(km$surv), time = num(f$time), surv = num(f$surv), tightTime = num(t$time),
           tightSurv = num(t$surv), logLik = num(loglik(f$time, f$surv, d$left, d$right)),
           tightLogLik = num(loglik(t$time, t$surv, d$left, d$right))))
})

# ---- cumulative incidence: survfit's Aalen-Johansen pstate, std.err, log interval; cmprsk::cuminc est and var
ci <- rd("cif.csv")
ciOut <- lapply(unique(ci$id), function(id) {
  d <- ci[ci$id == id, ]
  causes <- sort(unique(as.character(d$status[d$status != "0"])))
  f <- survfit(Surv(time, factor(status, levels = c("0", causes))) ~ 1, data = d)
  cols <- match(causes, f$states)
  cu <- cuminc(d$time, d$status, cencode = "0")
  tp <- timepoints(cu, f$time)
  per <- lapply(causes, function(c) {
    k <- match(c, f$states)
    row <- match(paste("1", c), rownames(tp$est))
    obj(list(cause = sprintf("\"%s\"", c), incidence = num(f$pstate[, k]), se = num(f$std.err[, k]),
             lower = num(f$lower[, k]), upper = num(f$upper[, k]), cumincEst = num(tp$est[row, ]),
             cumincVar = num(tp$var[row, ])))
  })
  obj(list(id = sprintf("\"%s\"", id), time = num(f$time), causes = arr(per)))
})

# ---- Cox with clusters: coxph(..., cluster = cl)
cx <- rd("cox.csv")
coxOut <- lapply(unique(cx$id), function(key) {
  d <- cx[cx$id == key, ]
  fit <- coxph(Surv(time, status) ~ x1 + x2, data = d, ties = d$ties[1], cluster = cl)
  s <- summary(fit)
  obj(list(id = sprintf("\"%s\"", key), coef = num(coef(fit)), se = num(sqrt(diag(fit$naive.var))),
           robustSe = num(sqrt(diag(fit$var))), lower = num(s$conf.int[, 3]), upper = num(s$conf.int[, 4]),
           pValue = num(s$coefficients[, "Pr(>|z|)"])))
})

# ---- logistic regression: glm(binomial); sandwich::vcovCL(type = "HC1") when there are clusters
lg <- rd("logistic.csv")
lgOut <- lapply(unique(lg$id), function(id) {
  d <- lg[lg$id == id, ]
  fit <- glm(y ~ x1 + x2, family = binomial, data = d)
  s <- summary(fit)$coefficients
  se <- s[, 2]
  used <- se
  robust <- NULL
  if (!all(is.na(d$cl))) {
    robust <- sqrt(diag(vcovCL(fit, cluster = ~cl, type = "HC1")))
    used <- robust
  }
  z <- qnorm(0.975)
  obj(list(id = sprintf("\"%s\"", id), coef = num(coef(fit)), se = num(se),
           robustSe = if (is.null(robust)) "null" else num(robust), oddsRatio = num(exp(coef(fit))),
           lower = num(exp(coef(fit) - z * used)), upper = num(exp(coef(fit) + z * used)),
           pValue = num(2 * pnorm(-abs(coef(fit) / used))), logLik = num(as.numeric(logLik(fit)))))
})

# ---- stratified log-rank: survdiff(Surv(time, status) ~ grp + strata(s))
st <- rd("strata.csv")
stOut <- lapply(unique(st$id), function(id) {
  d <- st[st$id == id, ]
  sd <- survdiff(Surv(time, status) ~ grp + strata(s), data = d)
  names <- sub("^grp=", "", names(sd$n))
  e <- if (is.matrix(sd$exp)) rowSums(sd$exp) else sd$exp
  o <- if (is.matrix(sd$obs)) rowSums(sd$obs) else sd$obs
  df <- sum(e > 0) - 1
  obj(list(id = sprintf("\"%s\"", id), groups = str(names), observed = num(o), expected = num(e),
           chiSquare = num(sd$chisq), df = num(df), pValue = num(pchisq(sd$chisq, df, lower.tail = FALSE))))
})

# ---- funnel limits: Spiegelhalter (2005) Appendix A.1.1 written out with qbinom/pbinom:
# r_p = qbinom(p, n, p0) (the smallest r with F(r) >= p), alpha = (F(r_p) - p) / (F(r_p) - F(r_p - 1)),
# limit = (r_p - alpha) / n, clipped to [0, 1].
fu <- rd("funnel.csv")
limit <- function(p, n, p0) {
  r <- qbinom(p, n, p0)
  a <- (pbinom(r, n, p0) - p) / (pbinom(r, n, p0) - pbinom(r - 1, n, p0))
  min(1, max(0, (r - a) / n))
}
fuOut <- lapply(seq_len(nrow(fu)), function(i) {
  tail <- (1 - fu$coverage[i]) / 2
  obj(list(lower = num(limit(tail, fu$n[i], fu$p0[i])), upper = num(limit(1 - tail, fu$n[i], fu$p0[i]))))
})

out <- obj(list(version = sprintf("\"%s / survival %s / sandwich %s / cmprsk %s\"", R.version.string,
                                  as.character(packageVersion("survival")), as.character(packageVersion("sandwich")),
                                  as.character(packageVersion("cmprsk"))),
                turnbull = arr(tbOut), cif = arr(ciOut), cox = arr(coxOut), logistic = arr(lgOut),
                strata = arr(stOut), funnel = arr(fuOut)))
writeLines(out, file.path(dir, "r.json"))
