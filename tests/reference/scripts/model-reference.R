# Reference values for Lamina's multivariable outcome models (issue 12, item 4).
# Usage: Rscript model-reference.R <dir>
# <dir>/rows.csv: run,time,event,y,patient,kind,lesion,lesion_mm,pai,group (y NA = not in the logistic model)
# <dir>/runs.csv: run,terms (e.g. "kind+lesion+pai"; factor columns are kind, lesion, group and paiLevel)
# Each factor's reference level is its most frequent one, chosen here by R (relevel on which.max(table)).
# Cox: coxph(Surv(time, event) ~ terms, ties = "efron", cluster = patient) — robust SE, Wald interval and p
# from summary(). Logistic: glm(y ~ terms, binomial) with sandwich::vcovCL(cluster = ~patient, type = "HC1").
# Writes <dir>/r.json by hand (jsonlite is not assumed), numbers at 17 digits.
suppressPackageStartupMessages({
  library(survival)
  library(sandwich)
})
args <- commandArgs(trailingOnly = TRUE)
dir <- args[1]
rows <- read.csv(file.path(dir, "rows.csv"), stringsAsFactors = FALSE)
runs <- read.csv(file.path(dir, "runs.csv"), stringsAsFactors = FALSE)
num <- function(x) {
  s <- ifelse(is.na(x), "null", formatC(as.numeric(x), digits = 17, format = "g"))
  paste0("[", paste(gsub(" ", "", s), collapse = ","), "]")
}
str <- function(x) paste0("[", paste(sprintf("\"%s\"", x), collapse = ","), "]")
mostFrequent <- function(x) { f <- factor(x); relevel(f, ref = names(which.max(table(f)))) }
out <- lapply(seq_len(nrow(runs)), function(k) {
  id <- runs$run[k]
  d <- rows[rows$run == id, ]
  for (v in c("kind", "lesion", "group")) d[[v]] <- mostFrequent(d[[v]])
  d$paiLevel <- mostFrequent(paste("PAI", d$pai))
  f <- as.formula(paste("Surv(time, event) ~", runs$terms[k]))
  cx <- coxph(f, data = d, ties = "efron", cluster = patient)
  sc <- summary(cx)$coefficients
  ci <- summary(cx)$conf.int
  l <- d[!is.na(d$y), ]
  for (v in c("kind", "lesion", "group")) l[[v]] <- mostFrequent(as.character(l[[v]]))
  l$paiLevel <- mostFrequent(paste("PAI", l$pai))
  g <- glm(as.formula(paste("y ~", runs$terms[k])), data = l, family = binomial)
  V <- vcovCL(g, cluster = ~patient, type = "HC1")
  b <- coef(g)
  rse <- sqrt(diag(V))
  z <- qnorm(0.975)
  sprintf(
    "{\"run\":\"%s\",\"cox\":{\"names\":%s,\"coef\":%s,\"robustSe\":%s,\"hr\":%s,\"lower\":%s,\"upper\":%s,\"p\":%s,\"n\":%d,\"events\":%d},\"logistic\":{\"names\":%s,\"coef\":%s,\"robustSe\":%s,\"or\":%s,\"lower\":%s,\"upper\":%s,\"p\":%s,\"n\":%d}}",
    id, str(rownames(sc)), num(sc[, "coef"]), num(sc[, "robust se"]), num(sc[, "exp(coef)"]), num(ci[, "lower .95"]), num(ci[, "upper .95"]), num(sc[, "Pr(>|z|)"]),
    cx$n, cx$nevent,
    str(names(b)[-1]), num(b[-1]), num(rse[-1]), num(exp(b[-1])), num(exp(b[-1] - z * rse[-1])), num(exp(b[-1] + z * rse[-1])), num((2 * pnorm(-abs(b / rse)))[-1]), nrow(l)
  )
})
version <- sprintf("R %s, survival %s, sandwich %s", getRversion(), packageVersion("survival"), packageVersion("sandwich"))
writeLines(sprintf("{\"version\":\"%s\",\"runs\":[%s]}", version, paste(unlist(out), collapse = ",")), file.path(dir, "r.json"))
