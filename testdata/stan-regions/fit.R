# Independent reference fit of spillway's region model (DESIGN.md "Region panel") in Stan.
#
# Reads data.csv here (6 regions x 104 weeks simulated from the region model), scales each
# region by its own means exactly as DESIGN.md says, fits the demand and outcome stages with
# panel_stage.stan (non-centred, as DESIGN.md writes the model), computes the effects of the
# window "all" per paired posterior draw, per region and summed over regions, and writes:
#   reference.csv    stage,name,mean,sd,q05,q50,q95   (every parameter, spillway's names; effects)
#   diagnostics.csv  per stage and chain: divergences, tree-depth hits, step size, leapfrog, times
#   session.txt      sessionInfo() and the wall time of this run
# Run:  cd testdata/stan-regions && nice Rscript fit.R

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
if (!file.exists(rstan_options("boost_lib")) && file.exists("/usr/include/boost"))
  rstan_options(boost_lib = "/usr/include")
rstan_options(auto_write = TRUE)         # keep the compiled program (panel_stage.rds) between runs

SEED <- 20261202L      # demand SEED + 1, outcome SEED + 2
CHAINS <- 4L
WARMUP <- 1000L
ITER <- 2500L
CORES <- 2L
ADAPT_DELTA <- 0.99    # at 0.95 the outcome stage had 31 divergences and a light upper tail
MAX_TREEDEPTH <- 12L

## ---- data and scaling (DESIGN.md "Scaling", per region) ----
d <- read.csv("data.csv", stringsAsFactors = FALSE)
regions <- unique(d$region)                 # order of first appearance, as spillway reads them
G <- length(regions)
upper <- c("video_spend", "audio_spend")
search <- c("search_spend")
controls <- c("price")
T <- sum(d$region == regions[1])
spend_scale <- function(x) if (any(x > 0)) x / mean(x[x > 0]) else 0 * x
reg <- lapply(regions, function(r) d[d$region == r, ])
tt <- seq_len(T)
tau <- (tt - 1) / (T - 1)
P52 <- 52.18
cosm <- cbind(cos(2 * pi * tt / P52), cos(4 * pi * tt / P52))
sinm <- cbind(sin(2 * pi * tt / P52), sin(4 * pi * tt / P52))
Z <- lapply(reg, function(x) {
  z <- scale(as.matrix(x[, controls, drop = FALSE]))        # n-1 divisor, within the region
  attr(z, "scaled:center") <- NULL; attr(z, "scaled:scale") <- NULL
  z
})
q_t <- lapply(reg, function(x) x$branded_queries / mean(x$branded_queries))
y_t <- lapply(reg, function(x) x$conversions / mean(x$conversions))
y_mean <- sapply(reg, function(x) mean(x$conversions))
X_of <- function(cols) lapply(cols, function(c) lapply(reg, function(x) spend_scale(x[[c]])))

stage_data <- function(response, cols, has_q) {
  Xl <- X_of(cols)
  X <- array(0, dim = c(length(cols), G, T))                # X[c, g] is a vector over weeks
  for (c in seq_along(cols)) for (g in seq_len(G)) X[c, g, ] <- Xl[[c]][[g]]
  Za <- array(0, dim = c(G, T, length(controls)))
  for (g in seq_len(G)) Za[g, , ] <- Z[[g]]
  list(G = G, T = T, C = length(cols), P = length(controls), HAS_Q = has_q,
       y = do.call(rbind, response), q = do.call(rbind, q_t), tau = tau, cosm = cosm, sinm = sinm,
       Z = Za, X = X, mu_loc = 0.5, mu_sd = 0.5)
}
stages <- list(
  demand = list(data = stage_data(q_t, upper, 0L), seed = SEED + 1L, sfx = "q",
                cols = upper, fam = list(c("alpha", "lam", "K", "S"), c("alpha", "lam", "K", "S"))),
  outcome = list(data = stage_data(y_t, c(search, upper), 1L), seed = SEED + 2L, sfx = "y",
                 cols = c(search, upper),
                 fam = list(c("beta", "lam_s", "K_s", "S_s"), c("delta", "lam2", "K2", "S2"), c("delta", "lam2", "K2", "S2")))
)

## ---- spillway's names for the Stan parameters ----
spill_names <- function(st) {
  s <- stages[[st]]; x <- s$sfx
  m <- c(mu = paste0("mu_", x), b = paste0("b_", x),
         "cs[1]" = paste0("c", x, "[1]"), "cs[2]" = paste0("c", x, "[2]"),
         "ds[1]" = paste0("d", x, "[1]"), "ds[2]" = paste0("d", x, "[2]"),
         "phi[1]" = paste0("phi_", x, "[price]"), sigma = paste0("sigma_", x),
         tau_mu = paste0("tau_mu_", x))
  for (g in seq_len(G)) m[sprintf("mu_g[%d]", g)] <- sprintf("mu_%s[%s]", x, regions[g])
  if (s$data$HAS_Q == 1) {
    m["gamma[1]"] <- "gamma"; m["tau_gamma[1]"] <- "tau_gamma"
    for (g in seq_len(G)) m[sprintf("gamma_g[1,%d]", g)] <- sprintf("gamma[%s]", regions[g])
  }
  for (c in seq_along(s$cols)) {
    f <- s$fam[[c]]; col <- s$cols[c]
    m[sprintf("theta[%d]", c)] <- sprintf("%s[%s]", f[1], col)
    m[sprintf("lam[%d]", c)] <- sprintf("%s[%s]", f[2], col)
    m[sprintf("K[%d]", c)] <- sprintf("%s[%s]", f[3], col)
    m[sprintf("S[%d]", c)] <- sprintf("%s[%s]", f[4], col)
    m[sprintf("tau_theta[%d]", c)] <- sprintf("tau_%s[%s]", f[1], col)
    for (g in seq_len(G)) m[sprintf("theta_g[%d,%d]", c, g)] <- sprintf("%s[%s,%s]", f[1], col, regions[g])
  }
  m
}

stacked <- function(fit) {
  a <- as.array(fit)
  m <- do.call(rbind, lapply(seq_len(dim(a)[2]), function(ch) a[, ch, ]))
  colnames(m) <- dimnames(a)[[3]]
  m
}
summ <- function(stage, name, x) data.frame(stage = stage, name = name, mean = mean(x), sd = sd(x),
  q05 = unname(quantile(x, 0.05)), q50 = unname(quantile(x, 0.5)), q95 = unname(quantile(x, 0.95)))

mod <- stan_model(file = "panel_stage.stan", model_name = "panel_stage")
rows <- list(); diag <- list(); draws <- list()
for (st in names(stages)) {
  s <- stages[[st]]
  message(sprintf("[%s] sampling %s", format(Sys.time(), "%H:%M:%S"), st))
  fit <- sampling(mod, data = s$data, chains = CHAINS, iter = ITER, warmup = WARMUP, seed = s$seed,
                  cores = CORES, refresh = 0,
                  control = list(adapt_delta = ADAPT_DELTA, max_treedepth = MAX_TREEDEPTH))
  sp <- get_sampler_params(fit, inc_warmup = FALSE); el <- get_elapsed_time(fit)
  a <- as.array(fit)
  nm <- spill_names(st)
  rh <- sapply(names(nm), function(p) rhat(a[, , p]))
  eb <- sapply(names(nm), function(p) ess_bulk(a[, , p]))
  for (ch in seq_along(sp))
    diag[[length(diag) + 1]] <- data.frame(stage = st, chain = ch,
      divergences = sum(sp[[ch]][, "divergent__"]),
      treedepth_hits = sum(sp[[ch]][, "treedepth__"] >= MAX_TREEDEPTH),
      step_size = sp[[ch]][1, "stepsize__"], mean_leapfrog = mean(sp[[ch]][, "n_leapfrog__"]),
      warmup_seconds = el[ch, "warmup"], sampling_seconds = el[ch, "sample"],
      max_rhat = max(rh), min_ess_bulk = min(eb))
  m <- stacked(fit)
  draws[[st]] <- m
  for (p in names(nm)) rows[[length(rows) + 1]] <- summ(st, nm[[p]], m[, p])
}

## ---- effects of the window "all" per paired draw (DESIGN.md "Effects") ----
# Zeroing a channel's spend in every week removes its whole response, so per region g:
#   via search = mean(y_g) gamma_g alpha[c,g] sum_t H(a(x~[c,g]; lam), K, S)
#   direct     = mean(y_g) delta[c,g] sum_t H(a(x~[c,g]; lam2), K2, S2)
#   paid search, controlled = mean(y_g) beta_g sum_t H(a(s~_g; lam_s), K_s, S_s)
# summed over regions draw by draw; mediated share = via / total of the sums.
adstock <- function(x, lam) as.numeric(stats::filter((1 - lam) * x, lam, method = "recursive"))
hill <- function(a, K, S) ifelse(a > 0, a^S / (a^S + K^S), 0)
sumH <- function(x, lam, K, S) sapply(seq_along(lam), function(i) sum(hill(adstock(x, lam[i]), K[i], S[i])))
D <- draws$demand; O <- draws$outcome
nd <- nrow(D)
Xd <- X_of(upper); Xo <- X_of(c(search, upper))
eff <- list()
add_eff <- function(name, x) eff[[length(eff) + 1]] <<- summ("effect", name, x)
tot <- list()
for (g in seq_len(G)) {
  r <- regions[g]
  gam <- O[, sprintf("gamma_g[1,%d]", g)]
  hs <- sumH(Xo[[1]][[g]], O[, "lam[1]"], O[, "K[1]"], O[, "S[1]"])
  ctl <- y_mean[g] * O[, sprintf("theta_g[1,%d]", g)] * hs
  add_eff(sprintf("controlled[%s,%s]", search, r), ctl)
  tot[[sprintf("controlled[%s]", search)]] <- (if (g == 1) 0 else tot[[sprintf("controlled[%s]", search)]]) + ctl
  for (c in seq_along(upper)) {
    col <- upper[c]
    h1 <- sumH(Xd[[c]][[g]], D[, sprintf("lam[%d]", c)], D[, sprintf("K[%d]", c)], D[, sprintf("S[%d]", c)])
    h2 <- sumH(Xo[[c + 1]][[g]], O[, sprintf("lam[%d]", c + 1)], O[, sprintf("K[%d]", c + 1)], O[, sprintf("S[%d]", c + 1)])
    via <- y_mean[g] * gam * D[, sprintf("theta_g[%d,%d]", c, g)] * h1
    dir <- y_mean[g] * O[, sprintf("theta_g[%d,%d]", c + 1, g)] * h2
    add_eff(sprintf("via_search[%s,%s]", col, r), via)
    add_eff(sprintf("direct[%s,%s]", col, r), dir)
    add_eff(sprintf("total[%s,%s]", col, r), via + dir)
    if (all(via + dir > 0)) add_eff(sprintf("mediated_share[%s,%s]", col, r), via / (via + dir))
    for (p in c("via", "dir")) {
      k <- sprintf("%s[%s]", p, col)
      tot[[k]] <- (if (g == 1) 0 else tot[[k]]) + get(p)
    }
  }
}
add_eff(sprintf("controlled[%s,total]", search), tot[[sprintf("controlled[%s]", search)]])
for (col in upper) {
  via <- tot[[sprintf("via[%s]", col)]]; dir <- tot[[sprintf("dir[%s]", col)]]
  add_eff(sprintf("via_search[%s,total]", col), via)
  add_eff(sprintf("direct[%s,total]", col), dir)
  add_eff(sprintf("total[%s,total]", col), via + dir)
  add_eff(sprintf("mediated_share[%s,total]", col), via / (via + dir))
}

out <- do.call(rbind, c(rows, eff))
write.csv(out, "reference.csv", row.names = FALSE, quote = FALSE)
write.csv(do.call(rbind, diag), "diagnostics.csv", row.names = FALSE, quote = FALSE)
writeLines(c(capture.output(sessionInfo()),
             sprintf("wall seconds: %.0f", as.numeric(difftime(Sys.time(), wall_start, units = "secs")))),
           "session.txt")
message(sprintf("[%s] done", format(Sys.time(), "%H:%M:%S")))
