# Reference values from R's survival package (and stats) for Lamina's
# conformance suite. Usage: Rscript survival-reference.R <dir>
# <dir> holds datasets.csv (id,time,status,grp,x1,x2), km.csv (id,conf,level,tau),
# groups.csv (id) and cox.csv (id) listing which analyses to run, props.csv
# (x,n,level), tables.csv (id,row,col,count) and fisher.csv (a,b,c,d).
# Writes <dir>/r.json by hand (jsonlite is not assumed), numbers at 17 digits.
suppressPackageStartupMessages(library(survival))
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
obj <- function(l) paste0("{", paste(sprintf("\"%s\":%s", names(l), unlist(l)), collapse = ","), "}")
arr <- function(items) paste0("[", paste(unlist(items), collapse = ","), "]")

data <- rd("datasets.csv")
data$grp <- as.character(data$grp)

km <- rd("km.csv")
kmOut <- lapply(seq_len(nrow(km)), function(i) {
  d <- data[data$id == km$id[i], ]
  fit <- survfit(Surv(time, status) ~ 1, data = d, conf.type = km$conf[i], conf.int = km$level[i])
  tab <- survival:::survmean(fit, rmean = km$tau[i])$matrix
  obj(list(id = sprintf("\"%s\"", km$id[i]), conf = sprintf("\"%s\"", km$conf[i]), level = num(km$level[i]),
           tau = num(km$tau[i]), time = num(fit$time), nRisk = num(fit$n.risk), nEvent = num(fit$n.event),
           nCensor = num(fit$n.censor), survival = num(fit$surv), lower = num(fit$lower), upper = num(fit$upper),
           median = num(tab["median"]), medianLower = num(tab[8]), medianUpper = num(tab[9]),
           rmean = num(tab["rmean"]), rmeanSe = num(tab["se(rmean)"])))
})

grp <- rd("groups.csv")
lrOut <- lapply(grp$id, function(id) {
  d <- data[data$id == id, ]
  sd <- survdiff(Surv(time, status) ~ grp, data = d)
  names <- sub("^grp=", "", names(sd$n))
  e <- if (is.matrix(sd$exp)) rowSums(sd$exp) else sd$exp
  o <- if (is.matrix(sd$obs)) rowSums(sd$obs) else sd$obs
  obj(list(id = sprintf("\"%s\"", id), groups = paste0("[", paste(sprintf("\"%s\"", names), collapse = ","), "]"),
           observed = num(o), expected = num(e), chiSquare = num(sd$chisq), df = num(sum(e > 0) - 1),
           pValue = num(pchisq(sd$chisq, sum(e > 0) - 1, lower.tail = FALSE))))
})

cx <- rd("cox.csv")
coxOut <- lapply(seq_len(nrow(cx)), function(i) {
  d <- data[data$id == cx$id[i], ]
  fit <- coxph(Surv(time, status) ~ x1 + x2, data = d, ties = cx$ties[i])
  s <- summary(fit)
  obj(list(id = sprintf("\"%s\"", cx$id[i]), ties = sprintf("\"%s\"", cx$ties[i]), coef = num(coef(fit)),
           se = num(sqrt(diag(vcov(fit)))), hazardRatio = num(exp(coef(fit))),
           lower = num(s$conf.int[, 3]), upper = num(s$conf.int[, 4]), pValue = num(s$coefficients[, 5]),
           logLik = num(fit$loglik[2]), lrChiSquare = num(2 * (fit$loglik[2] - fit$loglik[1]))))
})

props <- rd("props.csv")
propOut <- lapply(seq_len(nrow(props)), function(i) {
  pt <- suppressWarnings(prop.test(props$x[i], props$n[i], conf.level = props$level[i], correct = FALSE))
  obj(list(x = num(props$x[i]), n = num(props$n[i]), level = num(props$level[i]),
           estimate = num(pt$estimate), lower = num(pt$conf.int[1]), upper = num(pt$conf.int[2])))
})

tabs <- rd("tables.csv")
tabOut <- lapply(unique(tabs$id), function(id) {
  t <- tabs[tabs$id == id, ]
  m <- matrix(0, max(t$row), max(t$col))
  for (k in seq_len(nrow(t))) m[t$row[k], t$col[k]] <- t$count[k]
  ct <- suppressWarnings(chisq.test(m, correct = FALSE))
  obj(list(id = sprintf("\"%s\"", id), chiSquare = num(ct$statistic), df = num(ct$parameter), pValue = num(ct$p.value)))
})

fi <- rd("fisher.csv")
fiOut <- lapply(seq_len(nrow(fi)), function(i) {
  m <- matrix(c(fi$a[i], fi$c[i], fi$b[i], fi$d[i]), 2, 2)
  obj(list(table = num(c(fi$a[i], fi$b[i], fi$c[i], fi$d[i])), pValue = num(fisher.test(m)$p.value)))
})

out <- obj(list(version = sprintf("\"%s / survival %s\"", R.version.string, as.character(packageVersion("survival"))),
                km = arr(kmOut), logRank = arr(lrOut), cox = arr(coxOut), wilson = arr(propOut),
                chiSquare = arr(tabOut), fisher = arr(fiOut)))
writeLines(out, file.path(dir, "r.json"))
