# Reference values for mediation/ols tests, computed with R's lm() (QR) on the committed NIST data.
# Run from this folder:  Rscript reference.R > reference.out
# Output: one "name value" pair per line, values printed with 17 significant digits.
p <- function(name, v) cat(sprintf("%s %.17g\n", name, v), sep = "")
cat(sprintf("R_version %s\n", paste(R.version$major, R.version$minor, sep = ".")))
fit <- function(prefix, file) {
  d <- read.table(file, header = TRUE)
  f <- lm(y ~ ., d)
  s <- summary(f)
  cf <- s$coefficients
  for (j in seq_len(nrow(cf))) {
    p(sprintf("%s_b%d", prefix, j - 1), cf[j, "Estimate"])
    p(sprintf("%s_se%d", prefix, j - 1), cf[j, "Std. Error"])
  }
  p(sprintf("%s_sigma", prefix), s$sigma)
  p(sprintf("%s_r2", prefix), s$r.squared)
  d
}
lo <- fit("longley", "longley.txt")
invisible(fit("norris", "norris.txt"))
# Copy check: the committed Longley data equal R's datasets::longley after NIST's units
# (GNP, Population, Employed x1000; Unemployed, Armed.Forces x10).
L <- datasets::longley
conv <- cbind(L$Employed * 1000, L$GNP.deflator, L$GNP * 1000, L$Unemployed * 10,
              L$Armed.Forces * 10, L$Population * 1000, L$Year)
p("longley_max_abs_diff_vs_datasets", max(abs(as.matrix(lo) - conv)))
