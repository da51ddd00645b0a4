// Stage 2 ("outcome") of spillway's default model, written directly from DESIGN.md.
// Scaled outcome y~ on trend, seasonality, controls, gamma * q~, saturated paid search
// and the direct (stage-2 transform) path of each upper-funnel channel.
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
  // Hill saturation a^S / (a^S + K^S), computed as inv_logit(S (log a - log K)); H(0) = 0.
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
  int<lower=1> T;            // weeks
  int<lower=1> C;            // upper-funnel channels
  int<lower=1> N;            // paid-search channels
  int<lower=0> P;            // controls
  vector[T] y;               // y / mean(y)
  vector[T] q;               // q / mean(q)
  vector[T] tau;             // (t-1)/(T-1)
  matrix[T, 2] cosm;         // cos(2 pi k t / 52.18), k = 1, 2
  matrix[T, 2] sinm;         // sin(2 pi k t / 52.18), k = 1, 2
  matrix[T, P] Z;            // standardised controls
  vector[T] X[C];            // upper-funnel spend / mean over weeks with spend > 0
  vector[T] Xs[N];           // paid-search spend / mean over weeks with spend > 0
}
parameters {
  real mu_y;
  real b_y;
  vector[2] cy;
  vector[2] dy;
  vector[P] phi_y;
  real<lower=0> gamma;
  vector<lower=0>[N] beta;
  vector<lower=0, upper=1>[N] lam_s;
  vector<lower=0>[N] K_s;
  vector<lower=0>[N] S_s;
  vector<lower=0>[C] delta;
  vector<lower=0, upper=1>[C] lam2;
  vector<lower=0>[C] K2;
  vector<lower=0>[C] S2;
  real<lower=0> sigma_y;
}
model {
  vector[T] n = mu_y + b_y * tau + cosm * cy + sinm * dy + Z * phi_y + gamma * q;
  for (s in 1:N)
    n += beta[s] * hill(adstock(Xs[s], lam_s[s]), K_s[s], S_s[s]);
  for (c in 1:C)
    n += delta[c] * hill(adstock(X[c], lam2[c]), K2[c], S2[c]);

  mu_y ~ normal(0.5, 0.5);
  b_y ~ normal(0, 0.5);
  cy ~ normal(0, 0.25);
  dy ~ normal(0, 0.25);
  phi_y ~ normal(0, 0.5);
  gamma ~ normal(0, 0.5);      // half-normal via <lower=0>
  beta ~ normal(0, 0.5);       // half-normal via <lower=0>
  lam_s ~ beta(3, 3);
  K_s ~ gamma(3, 3);           // shape 3, rate 3
  S_s ~ gamma(4, 2);           // shape 4, rate 2
  delta ~ normal(0, 0.5);      // half-normal via <lower=0>
  lam2 ~ beta(3, 3);
  K2 ~ gamma(3, 3);
  S2 ~ gamma(4, 2);
  sigma_y ~ normal(0, 0.5);    // half-normal via <lower=0>

  y ~ normal(n, sigma_y);
}
