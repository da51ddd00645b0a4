# Independent reference fit of spillway's default model (DESIGN.md, "The default model") in Stan.
#
# Reads ../demo/data.csv (relative to this script's folder), scales it exactly as DESIGN.md says,
# fits stage 1 (demand.stan), stage 2 (outcome.stan) and the naive stage 2 (naive.stan) with rstan,
# computes the effects per paired posterior draw and writes, next to this script:
#   reference.csv    stage,name,mean,sd,q05,q50,q95   (parameters and effects)
#   diagnostics.csv  per stage and chain: divergences, tree-depth hits, step size, leapfrog, times
#   ess.csv          per stage: min bulk ESS, max R-hat, total sampling seconds
#   session.txt      sessionInfo() and wall time of this run
# Run:  cd testdata/stan && Rscript fit.R

wall_start <- Sys.time()

suppressPackageStartupMessages({
  library(rstan)
  library(posterior)
})

script_dir <- local({
  a <- commandArgs(trailingOnly = FALSE)
  f <- sub("^--file=", "", a[grep("^--file=", a)])
  if (length(f) == 1) dirname(normalizePath(f)) else getwd()
})
setwd(script_dir)

# Debian's BH package is a stub over the system Boost headers, so point rstan at them.
if (!file.exists(rstan_options("boost_lib")) && file.exists("/usr/include/boost"))
  rstan_options(boost_lib = "/usr/include")

SEED <- 20250101L      # base seed; stages use SEED + 1, + 2, + 3
CHAINS <- 4L
WARMUP <- 1000L
ITER <- 2000L          # warmup + sampling
CORES <- 2L
MAX_TREEDEPTH <- 10L   # rstan default

## ---- data and scaling (DESIGN.md "Scaling") ----
d <- read.csv(file.path("..", "demo", "data.csv"), stringsAsFactors = FALSE)
upper <- c("video_spend", "audio_spend")
search <- c("search_spend")
controls <- c("price")
T <- nrow(d)

spend_scale <- function(x) x / mean(x[x > 0])
X <- sapply(upper, function(c) spend_scale(d[[c]]))            # T x C
Xs <- sapply(search, function(c) spend_scale(d[[c]]))          # T x N
if (!is.matrix(Xs)) Xs <- matrix(Xs, ncol = length(search), dimnames = list(NULL, search))
q_t <- d$branded_queries / mean(d$branded_queries)
y_mean <- mean(d$conversions)
y_t <- d$conversions / y_mean
Z <- scale(as.matrix(d[, controls, drop = FALSE]))             # (z - mean) / sd, n-1 divisor
attr(Z, "scaled:center") <- NULL
attr(Z, "scaled:scale") <- NULL
tt <- seq_len(T)
tau <- (tt - 1) / (T - 1)
P52 <- 52.18
cosm <- cbind(cos(2 * pi * 1 * tt / P52), cos(2 * pi * 2 * tt / P52))
sinm <- cbind(sin(2 * pi * 1 * tt / P52), sin(2 * pi * 2 * tt / P52))

stan_data <- list(
  T = T, C = length(upper), N = length(search), P = length(controls),
  y = y_t, q = q_t, tau = tau, cosm = cosm, sinm = sinm, Z = Z,
  X = t(X), Xs = t(Xs)                                         # arrays of vectors: [C][T]
)

## ---- transforms in R (same definitions as the Stan functions) ----
adstock <- function(x, lam) {
  # a[1] = (1-lam) x[1]; a[t] = (1-lam) x[t] + lam a[t-1]
  as.numeric(stats::filter((1 - lam) * x, lam, method = "recursive"))
}
hill <- function(a, K, S) ifelse(a > 0, a^S / (a^S + K^S), 0)

## ---- fitting ----
fit_stage <- function(model, data, seed, adapt_delta) {
  sampling(model, data = data, chains = CHAINS, iter = ITER, warmup = WARMUP,
           seed = seed, cores = CORES, refresh = 0,
           control = list(adapt_delta = adapt_delta, max_treedepth = MAX_TREEDEPTH))
}

sampler_table <- function(fit, stage, adapt_delta) {
  sp <- get_sampler_params(fit, inc_warmup = FALSE)
  el <- get_elapsed_time(fit)
  do.call(rbind, lapply(seq_along(sp), function(ch) {
    s <- sp[[ch]]
    data.frame(stage = stage, chain = ch,
               divergences = sum(s[, "divergent__"]),
               treedepth_hits = sum(s[, "treedepth__"] >= MAX_TREEDEPTH),
               step_size = s[1, "stepsize__"],
               mean_leapfrog = mean(s[, "n_leapfrog__"]),
               warmup_seconds = el[ch, "warmup"],
               sampling_seconds = el[ch, "sample"],
               adapt_delta = adapt_delta)
  }))
}

# Draws stacked chain by chain, in iteration order: row (ch-1)*1000 + i.
stacked_draws <- function(fit) {
  a <- as.array(fit)                                            # iter x chain x par
  m <- do.call(rbind, lapply(seq_len(dim(a)[2]), function(ch) a[, ch, ]))
  colnames(m) <- dimnames(a)[[3]]
  m
}

ess_table <- function(fit, stage, adapt_delta, used) {
  a <- as.array(fit)
  pars <- setdiff(dimnames(a)[[3]], "lp__")
  ess <- sapply(pars, function(p) ess_bulk(a[, , p]))
  rh <- sapply(pars, function(p) rhat(a[, , p]))
  data.frame(stage = stage, min_ess_bulk = min(ess),
             sampling_seconds_total = sum(get_elapsed_time(fit)[, "sample"]),
             max_rhat = max(rh), adapt_delta = adapt_delta, used = used)
}

stages <- list(
  demand = list(file = "demand.stan", seed = SEED + 1L),
  outcome = list(file = "outcome.stan", seed = SEED + 2L),
  naive = list(file = "naive.stan", seed = SEED + 3L)
)

diag_rows <- list()
ess_rows <- list()
chosen <- list()
for (st in names(stages)) {
  cfg <- stages[[st]]
  message(sprintf("[%s] compiling %s", format(Sys.time(), "%H:%M:%S"), cfg$file))
  mod <- stan_model(file = cfg$file, model_name = st)
  fits <- list()
  message(sprintf("[%s] sampling %s, adapt_delta 0.8", format(Sys.time(), "%H:%M:%S"), st))
  fits[["0.8"]] <- fit_stage(mod, stan_data, cfg$seed, 0.8)
  ndiv <- sum(sampler_table(fits[["0.8"]], st, 0.8)$divergences)
  if (ndiv > 0) {
    message(sprintf("[%s] %s: %d divergences at 0.8; refitting at adapt_delta 0.95",
                    format(Sys.time(), "%H:%M:%S"), st, ndiv))
    fits[["0.95"]] <- fit_stage(mod, stan_data, cfg$seed, 0.95)
  }
  # Reference values come from the cleaner fit (fewer divergences; ties go to 0.8).
  divs <- sapply(names(fits), function(k)
    sum(sampler_table(fits[[k]], st, as.numeric(k))$divergences))
  use <- names(fits)[which.min(divs)]
  for (k in names(fits)) {
    tb <- sampler_table(fits[[k]], st, as.numeric(k))
    tb$used <- k == use
    diag_rows[[length(diag_rows) + 1]] <- tb
    ess_rows[[length(ess_rows) + 1]] <- ess_table(fits[[k]], st, as.numeric(k), k == use)
  }
  chosen[[st]] <- fits[[use]]
}

## ---- parameter names as spillway spells them ----
name_map <- function(stage) {
  # returns a named character vector: spillway name -> Stan name, in reference order
  nm <- character(0)
  add <- function(sp, stn) nm[[sp]] <<- stn
  if (stage == "demand") {
    add("mu_q", "mu_q"); add("b_q", "b_q")
    add("cq[1]", "cq[1]"); add("cq[2]", "cq[2]"); add("dq[1]", "dq[1]"); add("dq[2]", "dq[2]")
    for (k in seq_along(controls)) add(sprintf("phi_q[%s]", controls[k]), sprintf("phi_q[%d]", k))
    for (c in seq_along(upper)) for (p in c("alpha", "lam", "K", "S"))
      add(sprintf("%s[%s]", p, upper[c]), sprintf("%s[%d]", p, c))
    add("sigma_q", "sigma_q")
  } else {
    add("mu_y", "mu_y"); add("b_y", "b_y")
    add("cy[1]", "cy[1]"); add("cy[2]", "cy[2]"); add("dy[1]", "dy[1]"); add("dy[2]", "dy[2]")
    for (k in seq_along(controls)) add(sprintf("phi_y[%s]", controls[k]), sprintf("phi_y[%d]", k))
    if (stage == "outcome") add("gamma", "gamma")
    for (s in seq_along(search)) for (p in c("beta", "lam_s", "K_s", "S_s"))
      add(sprintf("%s[%s]", p, search[s]), sprintf("%s[%d]", p, s))
    for (c in seq_along(upper)) for (p in c("delta", "lam2", "K2", "S2"))
      add(sprintf("%s[%s]", p, upper[c]), sprintf("%s[%d]", p, c))
    add("sigma_y", "sigma_y")
  }
  nm
}

summ <- function(stage, name, v) {
  qs <- quantile(v, c(0.05, 0.5, 0.95), type = 7, names = FALSE)
  data.frame(stage = stage, name = name, mean = mean(v), sd = sd(v),
             q05 = qs[1], q50 = qs[2], q95 = qs[3])
}

draws <- lapply(chosen, stacked_draws)
ref_rows <- list()
for (st in names(stages)) {
  nm <- name_map(st)
  for (sp in names(nm)) ref_rows[[length(ref_rows) + 1]] <- summ(st, sp, draws[[st]][, nm[[sp]]])
}

## ---- effects, pairing draw d of each fit (DESIGN.md "Effects", window all) ----
D1 <- draws$demand; D2 <- draws$outcome; D3 <- draws$naive
nd <- nrow(D1)
stopifnot(nrow(D2) == nd, nrow(D3) == nd)
C <- length(upper)
via <- matrix(NA_real_, nd, C, dimnames = list(NULL, upper))
dir <- via
controlled <- apparent <- borrowed <- naive <- numeric(nd)
for (i in seq_len(nd)) {
  H2 <- matrix(NA_real_, T, C)
  for (c in seq_len(C)) {
    H1 <- hill(adstock(X[, c], D1[i, sprintf("lam[%d]", c)]),
               D1[i, sprintf("K[%d]", c)], D1[i, sprintf("S[%d]", c)])
    H2[, c] <- hill(adstock(X[, c], D2[i, sprintf("lam2[%d]", c)]),
                    D2[i, sprintf("K2[%d]", c)], D2[i, sprintf("S2[%d]", c)])
    via[i, c] <- y_mean * D2[i, "gamma"] * D1[i, sprintf("alpha[%d]", c)] * sum(H1)
    dir[i, c] <- y_mean * D2[i, sprintf("delta[%d]", c)] * sum(H2[, c])
  }
  Hs <- hill(adstock(Xs[, 1], D2[i, "lam_s[1]"]), D2[i, "K_s[1]"], D2[i, "S_s[1]"])
  beta <- D2[i, "beta[1]"]; gamma <- D2[i, "gamma"]
  # d: least-squares coefficient on Hs when q~ is regressed on stage 2's other regressors.
  M <- cbind(1, tau, cosm, sinm, Z, Hs, H2)
  colnames(M) <- c("one", "tau", "cos1", "cos2", "sin1", "sin2", controls, "Hs", upper)
  dcoef <- lm.fit(M, q_t)$coefficients[["Hs"]]
  controlled[i] <- y_mean * beta * sum(Hs)
  apparent[i] <- y_mean * (beta + gamma * dcoef) * sum(Hs)
  borrowed[i] <- gamma * dcoef / (beta + gamma * dcoef)
  Hn <- hill(adstock(Xs[, 1], D3[i, "lam_s[1]"]), D3[i, "K_s[1]"], D3[i, "S_s[1]"])
  naive[i] <- y_mean * D3[i, "beta[1]"] * sum(Hn)
}
for (c in upper) {
  tot <- via[, c] + dir[, c]
  ref_rows[[length(ref_rows) + 1]] <- summ("effects", sprintf("via_search[%s]", c), via[, c])
  ref_rows[[length(ref_rows) + 1]] <- summ("effects", sprintf("direct[%s]", c), dir[, c])
  ref_rows[[length(ref_rows) + 1]] <- summ("effects", sprintf("total[%s]", c), tot)
  ref_rows[[length(ref_rows) + 1]] <- summ("effects", sprintf("mediated_share[%s]", c), via[, c] / tot)
}
s <- search[1]
ref_rows[[length(ref_rows) + 1]] <- summ("effects", sprintf("controlled[%s]", s), controlled)
ref_rows[[length(ref_rows) + 1]] <- summ("effects", sprintf("apparent[%s]", s), apparent)
ref_rows[[length(ref_rows) + 1]] <- summ("effects", sprintf("borrowed_share[%s]", s), borrowed)
ref_rows[[length(ref_rows) + 1]] <- summ("effects", sprintf("naive[%s]", s), naive)

## ---- write outputs ----
fmt <- function(df) {
  for (k in names(df)) if (is.double(df[[k]])) df[[k]] <- signif(df[[k]], 10)
  df
}
write.csv(fmt(do.call(rbind, ref_rows)), "reference.csv", row.names = FALSE, quote = FALSE)
write.csv(fmt(do.call(rbind, diag_rows)), "diagnostics.csv", row.names = FALSE, quote = FALSE)
write.csv(fmt(do.call(rbind, ess_rows)), "ess.csv", row.names = FALSE, quote = FALSE)

wall <- as.numeric(difftime(Sys.time(), wall_start, units = "secs"))
sink("session.txt")
cat(sprintf("fit.R wall time: %.1f s (compilation, sampling and effects)\n", wall))
cat(sprintf("seed base %d; %d chains x (%d warmup + %d sampling); cores %d\n\n",
            SEED, CHAINS, WARMUP, ITER - WARMUP, CORES))
print(sessionInfo())
sink()
message(sprintf("done in %.1f s", wall))
print(do.call(rbind, ess_rows))
