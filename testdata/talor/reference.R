# Reference values for mediation/linear tests, computed with R's lm() (QR) on tal_or.csv.
# Run from this folder:  Rscript reference.R > reference.out
# Output: one "name value" pair per line, values printed with 17 significant digits.
d <- read.csv("tal_or.csv")
p <- function(name, v) cat(sprintf("%s %.17g\n", name, v), sep = "")

# Copy check: the committed CSV equals psych's Tal_Or (if psych is installed).
if (requireNamespace("psych", quietly = TRUE)) {
  ref <- psych::Tal_Or[, c("cond", "pmi", "import", "reaction")]
  same <- nrow(ref) == nrow(d) && all(sapply(names(d), function(k) all(as.numeric(ref[[k]]) == d[[k]])))
  cat(sprintf("psych_version %s\n", as.character(packageVersion("psych"))))
  p("matches_psych_Tal_Or", as.numeric(same))
}
cat(sprintf("R_version %s\n", paste(R.version$major, R.version$minor, sep = ".")))

fa <- lm(pmi ~ cond, d)                # mediator model
fc <- lm(reaction ~ cond, d)           # total effect
fb <- lm(reaction ~ cond + pmi, d)     # outcome model
sa <- summary(fa)$coefficients
sb <- summary(fb)$coefficients
p("a", coef(fa)[["cond"]]); p("se_a", sa["cond", "Std. Error"]); p("int_a", coef(fa)[["(Intercept)"]])
p("c", coef(fc)[["cond"]]); p("se_c", summary(fc)$coefficients["cond", "Std. Error"])
p("cprime", coef(fb)[["cond"]]); p("se_cprime", sb["cond", "Std. Error"])
p("b", coef(fb)[["pmi"]]); p("se_b", sb["pmi", "Std. Error"]); p("int_b", coef(fb)[["(Intercept)"]])
p("r2_b", summary(fb)$r.squared); p("sigma_b", summary(fb)$sigma)
p("ab", coef(fa)[["cond"]] * coef(fb)[["pmi"]])

# Imai, Keele and Yamamoto (2010) sensitivity: rho at which ACME = 0 is cor(e_total, e_mediator),
# as in R package mediation's medsens (err.cr).
e1 <- resid(fc); e2 <- resid(fa)
p("rho_tilde", cor(e1, e2)); p("sd_e1", sd(e1)); p("sd_e2", sd(e2))

# Two parallel mediators (Hayes 2013, model 4 with pmi and import).
fi <- lm(import ~ cond, d)
f2 <- lm(reaction ~ cond + pmi + import, d)
p("a_import", coef(fi)[["cond"]])
p("cprime2", coef(f2)[["cond"]]); p("int2", coef(f2)[["(Intercept)"]])
p("b2_pmi", coef(f2)[["pmi"]]); p("b2_import", coef(f2)[["import"]])
s2 <- summary(f2)$coefficients
p("se2_pmi", s2["pmi", "Std. Error"]); p("se2_import", s2["import", "Std. Error"])

# One mediator with a covariate (import) in every regression.
fac <- lm(pmi ~ cond + import, d)
fcc <- lm(reaction ~ cond + import, d)
p("a_cov", coef(fac)[["cond"]]); p("se_a_cov", summary(fac)$coefficients["cond", "Std. Error"])
p("c_cov", coef(fcc)[["cond"]])
