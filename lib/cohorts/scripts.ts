/**
 * The two small analysis scripts a research export carries (issue 14). They read the files of the
 * unzipped archive (the folder given as first argument, else the working folder), print the
 * estimates and write them to a CSV beside the data (second argument to put it elsewhere), which
 * tests/reference/cohort-analysis.test.ts compares with lib/stats on the same rows.
 */

export const ANALYSIS_R = `# Lamina research export: survival analyses in R (package survival).
# Usage: Rscript analysis.R [folder with the export] [results file]
suppressPackageStartupMessages(library(survival))
args <- commandArgs(trailingOnly = TRUE)
dir <- if (length(args) >= 1) args[1] else "."
out <- if (length(args) >= 2) args[2] else file.path(dir, "analysis-results-R.csv")

cases <- read.csv(file.path(dir, "cases.csv"), colClasses = "character", na.strings = "", check.names = FALSE)
reviews <- read.csv(file.path(dir, "reviews.csv"), colClasses = c(case_id = "character"), na.strings = "")
numeric <- c("healing_left", "healing_right", "healing_time", "healing_event",
             "tooth_loss_left", "tooth_loss_right", "tooth_loss_time", "tooth_loss_event",
             "lesion_mm", "pai", "generalised")
for (v in intersect(numeric, names(cases))) cases[[v]] <- as.numeric(cases[[v]])
cat(sprintf("%d cases of %d patients, %d reviews\\n", nrow(cases), length(unique(cases$patient_id)), nrow(reviews)))

results <- data.frame(analysis = character(), term = character(), estimate = numeric(),
                      se = numeric(), lower = numeric(), upper = numeric(), stringsAsFactors = FALSE)
add <- function(analysis, term, estimate, se = NA, lower = NA, upper = NA) {
  results[nrow(results) + 1, ] <<- list(analysis, term, estimate, se, lower, upper)
}

# Kaplan-Meier at 12, 24 and 48 months (365, 731 and 1461 days after completion)
times <- c(365, 731, 1461)
for (endpoint in c("healing", "tooth_loss")) {
  fit <- survfit(Surv(cases[[paste0(endpoint, "_time")]], cases[[paste0(endpoint, "_event")]]) ~ 1)
  s <- summary(fit, times = times, extend = TRUE)
  for (i in seq_along(times)) add(paste0("km_", endpoint), as.character(times[i]), s$surv[i], s$std.err[i], s$lower[i], s$upper[i])
  print(s)
}

# Cox model of failure to heal on the factors in the export, teeth of a patient as a cluster
candidates <- c("kind", "lesion", "pai", "tooth_group", "arch", "fill")
covariates <- Filter(function(v) v %in% names(cases) && length(unique(cases[[v]])) > 1, candidates)
if (length(covariates) > 0) {
  for (v in setdiff(covariates, "pai")) cases[[v]] <- factor(cases[[v]])
  formula <- as.formula(paste("Surv(healing_time, healing_event) ~", paste(covariates, collapse = " + "), "+ cluster(patient_id)"))
  cox <- coxph(formula, data = cases, ties = "efron")
  print(summary(cox))
  ci <- confint(cox)
  for (term in names(coef(cox))) add("cox_healing", term, coef(cox)[[term]], sqrt(diag(cox$var))[match(term, names(coef(cox)))], ci[term, 1], ci[term, 2])
}
write.csv(results, out, row.names = FALSE)
cat("Results written to", out, "\\n")
`;

export const ANALYSIS_PY = `"""Lamina research export: load the files with pandas and print Kaplan-Meier estimates.

Usage: python3 analysis.py [folder with the export] [results file]
"""
import json
import os
import sys

import pandas as pd

folder = sys.argv[1] if len(sys.argv) > 1 else "."
out = sys.argv[2] if len(sys.argv) > 2 else os.path.join(folder, "analysis-results-py.csv")

cases = pd.read_csv(os.path.join(folder, "cases.csv"), dtype=str, keep_default_na=False, na_values=[""])
reviews = pd.read_csv(os.path.join(folder, "reviews.csv"), dtype={"case_id": str})
with open(os.path.join(folder, "dictionary.json"), encoding="utf-8") as f:
    dictionary = json.load(f)
for v in dictionary["variables"]:
    if v["variable"] in cases.columns and v["type"] in ("integer", "number", "boolean") and v["variable"] not in ("pai",):
        cases[v["variable"]] = pd.to_numeric(cases[v["variable"]])

print(f"{len(cases)} cases of {cases['patient_id'].nunique()} patients, {len(reviews)} reviews")
print(cases["outcome_12m"].value_counts(dropna=False).to_string())


def kaplan_meier(time, event, at):
    """S(t) at each time of at: the product over event times <= t of (1 - deaths / at risk)."""
    df = pd.DataFrame({"t": time, "e": event}).sort_values("t")
    g = df.groupby("t")["e"].agg(["sum", "size"])
    at_risk = g["size"][::-1].cumsum()[::-1]
    s = (1 - g["sum"] / at_risk).cumprod()
    return [float(s[s.index <= a].iloc[-1]) if (s.index <= a).any() else 1.0 for a in at]


rows = []
times = [365, 731, 1461]
for endpoint in ("healing", "tooth_loss"):
    estimates = kaplan_meier(cases[endpoint + "_time"], cases[endpoint + "_event"], times)
    for t, s in zip(times, estimates):
        print(f"Kaplan-Meier, {endpoint}, day {t}: {s:.4f}")
        rows.append({"analysis": "km_" + endpoint, "term": str(t), "estimate": s})
pd.DataFrame(rows).to_csv(out, index=False)
print("Results written to", out)
`;
