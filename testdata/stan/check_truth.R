# Sanity check (not used by tests): how many of the demo scenario's true values in
# ../demo/truth.json fall inside the 90% intervals [q05, q95] of reference.csv.
# Run after fit.R:  cd testdata/stan && Rscript check_truth.R
script_dir <- local({
  a <- commandArgs(trailingOnly = FALSE)
  f <- sub("^--file=", "", a[grep("^--file=", a)])
  if (length(f) == 1) dirname(normalizePath(f)) else getwd()
})
setwd(script_dir)

ref <- read.csv("reference.csv", stringsAsFactors = FALSE)
txt <- paste(readLines(file.path("..", "demo", "truth.json")), collapse = "\n")

# Flat "name": number pairs inside the "demand" and "outcome" objects (no JSON library needed).
block <- function(key) {
  m <- regmatches(txt, regexpr(sprintf('"%s": \\{[^}]*\\}', key), txt))
  kv <- regmatches(m, gregexpr('"[^"]+": -?[0-9.eE+-]+', m))[[1]]
  setNames(as.numeric(sub('.*": ', "", kv)), sub('^"([^"]+)".*', "\\1", kv))
}
truth <- list(demand = block("demand"), outcome = block("outcome"))

# Effects and borrowed entries for window "all".
objs <- regmatches(txt, gregexpr('\\{[^{}]*"window": "all"[^{}]*\\}', txt))[[1]]
get <- function(o, k) sub(sprintf('.*"%s": "?([^",\n]+)"?.*', k), "\\1", o)
eff <- setNames(as.numeric(sapply(objs, get, "value")),
                sprintf("%s[%s]", sapply(objs, get, "path"), sapply(objs, get, "channel")))
truth$effects <- eff

rows <- list()
for (st in names(truth)) for (nm in names(truth[[st]])) {
  r <- ref[ref$stage == st & ref$name == nm, ]
  if (nrow(r) != 1) next
  v <- truth[[st]][[nm]]
  rows[[length(rows) + 1]] <- data.frame(stage = st, name = nm, truth = signif(v, 4),
    q05 = signif(r$q05, 4), mean = signif(r$mean, 4), q95 = signif(r$q95, 4),
    inside = v >= r$q05 && v <= r$q95)
}
tab <- do.call(rbind, rows)
print(tab, row.names = FALSE)
for (st in unique(tab$stage))
  cat(sprintf("%s: %d of %d true values inside the 90%% interval\n", st,
              sum(tab$inside[tab$stage == st]), sum(tab$stage == st)))
cat(sprintf("all: %d of %d\n", sum(tab$inside), nrow(tab)))

# Second check: the effect formulas of fit.R evaluated at the TRUE parameters should reproduce
# truth.json's effects (window all), which spillway's own code computed from the same parameters.
d <- read.csv(file.path("..", "demo", "data.csv"))
T <- nrow(d); tt <- seq_len(T); tau <- (tt - 1) / (T - 1)
ss <- function(x) x / mean(x[x > 0])
adstock <- function(x, lam) as.numeric(stats::filter((1 - lam) * x, lam, method = "recursive"))
hill <- function(a, K, S) ifelse(a > 0, a^S / (a^S + K^S), 0)
q_t <- d$branded_queries / mean(d$branded_queries); ym <- mean(d$conversions)
z <- as.numeric(scale(d$price))
P52 <- 52.18
M0 <- cbind(one = 1, tau = tau, cos1 = cos(2 * pi * tt / P52), cos2 = cos(4 * pi * tt / P52),
            sin1 = sin(2 * pi * tt / P52), sin2 = sin(4 * pi * tt / P52), price = z)
td <- truth$demand; to <- truth$outcome
g <- to[["gamma"]]
calc <- c()
H2 <- list()
for (c in c("video_spend", "audio_spend")) {
  x <- ss(d[[c]]); p <- function(n) sprintf("%s[%s]", n, c)
  H1 <- hill(adstock(x, td[[p("lam")]]), td[[p("K")]], td[[p("S")]])
  H2[[c]] <- hill(adstock(x, to[[p("lam2")]]), to[[p("K2")]], to[[p("S2")]])
  calc[p("via_search")] <- ym * g * td[[p("alpha")]] * sum(H1)
  calc[p("direct")] <- ym * to[[p("delta")]] * sum(H2[[c]])
  calc[p("total")] <- calc[[p("via_search")]] + calc[[p("direct")]]
  calc[p("mediated_share")] <- calc[[p("via_search")]] / calc[[p("total")]]
}
Hs <- hill(adstock(ss(d$search_spend), to[["lam_s[search_spend]"]]), to[["K_s[search_spend]"]],
           to[["S_s[search_spend]"]])
M <- cbind(M0, Hs = Hs, do.call(cbind, H2))
dd <- lm.fit(M, q_t)$coefficients[["Hs"]]
b <- to[["beta[search_spend]"]]
calc["controlled[search_spend]"] <- ym * b * sum(Hs)
calc["apparent[search_spend]"] <- ym * (b + g * dd) * sum(Hs)
calc["borrowed_share[search_spend]"] <- g * dd / (b + g * dd)
cmp <- data.frame(name = names(calc), at_truth_R = calc, truth_json = eff[names(calc)],
                  rel_diff = signif(calc / eff[names(calc)] - 1, 3))
print(cmp, row.names = FALSE)
