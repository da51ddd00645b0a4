// Stage 1 ("demand") of spillway's default model, written directly from DESIGN.md.
// Scaled branded queries q~ on trend, two seasonal harmonics, standardised controls and
// the Hill-saturated, normalised geometric adstock of each scaled upper-funnel spend series.
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
  int<lower=0> P;            // controls
  vector[T] q;               // q / mean(q)
  vector[T] tau;             // (t-1)/(T-1)
  matrix[T, 2] cosm;         // cos(2 pi k t / 52.18), k = 1, 2
  matrix[T, 2] sinm;         // sin(2 pi k t / 52.18), k = 1, 2
  matrix[T, P] Z;            // standardised controls
  vector[T] X[C];            // upper-funnel spend / mean over weeks with spend > 0
}
parameters {
  real mu_q;
  real b_q;
  vector[2] cq;
  vector[2] dq;
  vector[P] phi_q;
  vector<lower=0>[C] alpha;
  vector<lower=0, upper=1>[C] lam;
  vector<lower=0>[C] K;
  vector<lower=0>[C] S;
  real<lower=0> sigma_q;
}
model {
  vector[T] m = mu_q + b_q * tau + cosm * cq + sinm * dq + Z * phi_q;
  for (c in 1:C)
    m += alpha[c] * hill(adstock(X[c], lam[c]), K[c], S[c]);

  mu_q ~ normal(0.5, 0.5);
  b_q ~ normal(0, 0.5);
  cq ~ normal(0, 0.25);
  dq ~ normal(0, 0.25);
  phi_q ~ normal(0, 0.5);
  alpha ~ normal(0, 0.5);      // half-normal via <lower=0>
  lam ~ beta(3, 3);
  K ~ gamma(3, 3);             // shape 3, rate 3
  S ~ gamma(4, 2);             // shape 4, rate 2
  sigma_q ~ normal(0, 0.5);    // half-normal via <lower=0>

  q ~ normal(m, sigma_q);
}
