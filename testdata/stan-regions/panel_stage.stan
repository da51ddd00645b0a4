// One stage of spillway's region model (DESIGN.md "Region panel"), written directly from
// DESIGN.md in its own non-centred form: region intercepts mu_g = mu + tau_mu z_g; each
// coefficient theta[c,g] = theta[c] exp(tau_theta[c] eta[c,g]), eta ~ N(0, 1); trend,
// seasons, controls, transforms (adstock retention, Hill K and S) and sigma shared.
// The demand stage has HAS_Q = 0 (queries on the upper-funnel channels); the outcome stage
// has HAS_Q = 1 (gamma varies by region too) and its channels are paid search, then the
// upper-funnel channels' direct paths.
// Syntax: Stan 2.21 (rstan 2.21 as packaged by Debian).
functions {
  // Normalised geometric adstock: a[1] = (1-lam) x[1]; a[t] = (1-lam) x[t] + lam a[t-1].
  vector adstock(vector x, real lam) {
    int T = num_elements(x);
    vector[T] a;
    a[1] = (1 - lam) * x[1];
    for (t in 2:T)
      a[t] = (1 - lam) * x[t] + lam * a[t - 1];
    return a;
  }
  // Hill saturation a^S / (a^S + K^S), as inv_logit(S (log a - log K)); H(0) = 0.
  vector hill(vector a, real K, real S) {
    int T = num_elements(a);
    vector[T] h;
    for (t in 1:T) {
      if (a[t] <= 0)
        h[t] = 0;
      else
        h[t] = inv_logit(S * (log(a[t]) - log(K)));
    }
    return h;
  }
}
data {
  int<lower=1> G;                  // regions
  int<lower=1> T;                  // weeks
  int<lower=1> C;                  // channels of this stage
  int<lower=0> P;                  // controls
  int<lower=0, upper=1> HAS_Q;     // 1: the outcome stage's gamma q~ term
  vector[T] y[G];                  // response / the region's mean
  vector[T] q[G];                  // queries / the region's mean (unused when HAS_Q = 0)
  vector[T] tau;                   // (t-1)/(T-1)
  matrix[T, 2] cosm;               // cos(2 pi k t / 52.18), k = 1, 2
  matrix[T, 2] sinm;               // sin(2 pi k t / 52.18), k = 1, 2
  matrix[T, P] Z[G];               // controls standardised within each region
  vector[T] X[C, G];               // spend / the region's mean over weeks with spend > 0 (0 if none)
  real mu_loc;                     // prior of mu: normal(mu_loc, mu_sd)
  real mu_sd;
}
parameters {
  real mu;
  real b;
  vector[2] cs;
  vector[2] ds;
  vector[P] phi;
  real<lower=0> gamma[HAS_Q];
  vector<lower=0>[C] theta;
  vector<lower=0, upper=1>[C] lam;
  vector<lower=0>[C] K;
  vector<lower=0>[C] S;
  real<lower=0> sigma;
  real<lower=0> tau_mu;
  vector[G] mu_z;
  real<lower=0> tau_gamma[HAS_Q];
  vector[G] gamma_z[HAS_Q];
  vector<lower=0>[C] tau_theta;
  vector[G] theta_z[C];
}
transformed parameters {
  vector[G] mu_g = mu + tau_mu * mu_z;
  vector[G] gamma_g[HAS_Q];
  vector[G] theta_g[C];
  for (k in 1:HAS_Q)
    gamma_g[k] = gamma[k] * exp(tau_gamma[k] * gamma_z[k]);
  for (c in 1:C)
    theta_g[c] = theta[c] * exp(tau_theta[c] * theta_z[c]);
}
model {
  vector[T] base = b * tau + cosm * cs + sinm * ds;
  for (g in 1:G) {
    vector[T] n = mu_g[g] + base + Z[g] * phi;
    if (HAS_Q == 1)
      n += gamma_g[1][g] * q[g];
    for (c in 1:C)
      n += theta_g[c][g] * hill(adstock(X[c, g], lam[c]), K[c], S[c]);
    y[g] ~ normal(n, sigma);
  }
  mu ~ normal(mu_loc, mu_sd);
  b ~ normal(0, 0.5);
  cs ~ normal(0, 0.25);
  ds ~ normal(0, 0.25);
  phi ~ normal(0, 0.5);
  gamma ~ normal(0, 0.5);          // half-normal via <lower=0>
  theta ~ normal(0, 0.5);          // half-normal via <lower=0>
  lam ~ beta(3, 3);
  K ~ gamma(3, 3);                 // shape 3, rate 3
  S ~ gamma(4, 2);                 // shape 4, rate 2
  sigma ~ normal(0, 0.5);          // half-normal via <lower=0>
  tau_mu ~ normal(0, 0.5);         // half-normal via <lower=0>
  mu_z ~ std_normal();
  tau_gamma ~ normal(0, 0.3);      // half-normal via <lower=0>
  for (k in 1:HAS_Q)
    gamma_z[k] ~ std_normal();
  tau_theta ~ normal(0, 0.3);      // half-normal via <lower=0>
  for (c in 1:C)
    theta_z[c] ~ std_normal();
}
