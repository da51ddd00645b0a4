# Reference diagnostics for funnel/mcmc's tests, computed with the R package
# posterior (Debian r-cran-posterior 1.4.0 under R 4.2). Run from funnel/mcmc:
#
#   Rscript testdata/posterior.R
#
# It writes
#   testdata/eight_schools_draws.csv     posterior::example_draws() (eight
#                                        schools, 4 chains x 100), exported
#                                        with 17 significant digits so that
#                                        Go reads the same doubles;
#   testdata/eight_schools_posterior.csv its diagnostics, computed on the
#                                        in-memory draws;
#   testdata/own_posterior.csv           diagnostics of own_draws.csv;
#   testdata/tiny_posterior.csv          diagnostics of tiny_draws.csv.
# own_draws.csv and tiny_draws.csv come from testdata/gendraws.go; every value
# is a multiple of 2^-10 with a short decimal form, which R reads exactly
# (checked below).

suppressMessages(library(posterior))
stopifnot(packageVersion("posterior") == "1.4.0")

fmt <- function(x) ifelse(is.na(x), "NA", sprintf("%.17g", x))

write_tidy <- function(d, path) {
  df <- as_draws_df(d)
  vars <- variables(d)
  out <- data.frame(.chain = df$.chain, .iteration = df$.iteration, .draw = df$.draw,
                    check.names = FALSE)
  for (v in vars) out[[v]] <- fmt(df[[v]])
  write.csv(out, path, row.names = FALSE, quote = FALSE)
}

read_tidy <- function(path) {
  df <- read.csv(path, check.names = FALSE)
  vals <- as.matrix(df[, -(1:3)])
  stopifnot(all(vals * 1024 == round(vals * 1024)))  # exact dyadic values
  as_draws_array(as_draws_df(df))
}

reference <- function(d, path) {
  rows <- lapply(variables(d), function(v) {
    x <- extract_variable_matrix(d, v)
    q <- quantile2(x, probs = c(0.05, 0.5, 0.95))
    eq <- ess_quantile(x, probs = c(0.05, 0.95))
    data.frame(
      parameter = v,
      mean = fmt(mean(x)), sd = fmt(sd(x)),
      q05 = fmt(q[[1]]), q50 = fmt(q[[2]]), q95 = fmt(q[[3]]),
      rhat = fmt(rhat(x)), rhat_basic = fmt(rhat_basic(x)),
      ess_bulk = fmt(ess_bulk(x)), ess_tail = fmt(ess_tail(x)),
      ess_basic = fmt(ess_basic(x)),
      ess_q05 = fmt(eq[[1]]), ess_q95 = fmt(eq[[2]]),
      mcse_mean = fmt(mcse_mean(x)),
      check.names = FALSE)
  })
  write.csv(do.call(rbind, rows), path, row.names = FALSE, quote = FALSE)
}

eight <- example_draws()
write_tidy(eight, "testdata/eight_schools_draws.csv")
suppressWarnings(reference(eight, "testdata/eight_schools_posterior.csv"))
suppressWarnings(reference(read_tidy("testdata/own_draws.csv"), "testdata/own_posterior.csv"))
suppressWarnings(reference(read_tidy("testdata/tiny_draws.csv"), "testdata/tiny_posterior.csv"))
