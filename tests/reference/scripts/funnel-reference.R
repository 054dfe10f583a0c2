# Reference values for tests/unit/outcomes/funnel.test.ts (issue 12, item 5): R's glm on a
# deterministic data set (no random numbers; the test builds the same rows), the expected
# successes per clinician (sum of fitted probabilities), O/E, and the adjusted rate O/E × p0.
# Run: Rscript tests/reference/scripts/funnel-reference.R
i <- 1:240
lesion <- (i * 7) %% 11
pai <- 1 + (i * 3) %% 5
kind <- ifelse(i %% 3 == 0, "nonsurgical_retreatment", "primary_treatment")
group <- c("molar", "premolar", "anterior", "molar")[(i %% 4) + 1]
clinician <- c("a", "b", "c")[((i * 5) %% 7) %% 3 + 1]
score <- 70 - 3 * lesion - 6 * (pai - 1) - 10 * (kind == "nonsurgical_retreatment") + 8 * (group == "anterior") + ((i * 37) %% 40) - 20
y <- as.integer(score > 35)
d <- data.frame(y, lesion, pai, kind = relevel(factor(kind), "primary_treatment"), group = relevel(factor(group), "molar"), clinician)
fit <- glm(y ~ lesion + kind + group + pai, family = binomial, data = d)
print(coef(fit), digits = 15)
d$p <- fitted(fit)
p0 <- mean(d$y)
cat("n", nrow(d), "events", sum(d$y), "p0", format(p0, digits = 15), "\n")
for (k in c("a", "b", "c")) {
  s <- d[d$clinician == k, ]
  O <- sum(s$y); E <- sum(s$p)
  cat(k, "n", nrow(s), "O", O, "E", format(E, digits = 15), "OE", format(O / E, digits = 15), "adj", format(O / E * p0, digits = 15), "\n")
}
