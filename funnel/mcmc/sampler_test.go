package mcmc_test

import (
	"bytes"
	"context"
	"errors"
	"math"
	"reflect"
	"runtime"
	"slices"
	"strings"
	"sync"
	"sync/atomic"
	"testing"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/mathext"

	"spillway/funnel/mcmc"
	"spillway/funnel/mcmc/mcmctest"
	"spillway/funnel/stat"
)

// transformed returns per-chain draws of f(name's draws).
func transformed(x [][]float64, f func(float64) float64) [][]float64 {
	out := make([][]float64, len(x))
	for c, ch := range x {
		out[c] = make([]float64, len(ch))
		for i, v := range ch {
			out[c][i] = f(v)
		}
	}
	return out
}

// checkMoment reports whether the draws' mean is within k MCSE of want.
func checkMoment(t *testing.T, label string, x [][]float64, want, k float64) {
	t.Helper()
	got, se := stat.Mean(slices.Concat(x...)), mcmc.MCSEMean(x)
	if math.Abs(got-want) > k*se {
		t.Errorf("%s: mean %.6g, want %.6g within %g MCSE (MCSE %.3g, off by %.2f MCSE)", label, got, want, k, se, (got-want)/se)
	}
}

func checkConverged(t *testing.T, fit *mcmc.Fit) []mcmc.Summary {
	t.Helper()
	sums := mcmc.Summarize(fit)
	for _, s := range sums {
		if !(s.Rhat < 1.01) || !(s.ESSBulk > 400) || !(s.ESSTail > 400) {
			t.Errorf("%s: rhat %.4f, ess_bulk %.0f, ess_tail %.0f; want < 1.01, > 400, > 400", s.Parameter, s.Rhat, s.ESSBulk, s.ESSTail)
		}
	}
	for c, ch := range fit.Chains {
		if ch.Stats.Divergences != 0 {
			t.Errorf("chain %d: %d divergences, want 0", c+1, ch.Stats.Divergences)
		}
	}
	if v := mcmc.Judge(fit, sums); !v.Trustworthy {
		t.Errorf("verdict: not trustworthy: %v", v.Reasons)
	}
	return sums
}

// TestConjugateRegression samples the normal-inverse-gamma regression of
// REFERENCES.md section 7 (the exact small case: X = [1, x], x = 0..4,
// y = (1, 3, 2, 5, 4), μ0 = 0, Λ0 = I, a0 = 2, b0 = 1) and compares with the
// closed-form posterior (Gelman et al., BDA3 ch. 14; conjugate update):
// μn = (85/86, 39/43), Var(β | y) = bn/(an − 1) Λn⁻¹ with an = 9/2,
// bn = 663/172, E[σ² | y] = bn/(an − 1) = 663/602; σ² | y ~ Inv-Gamma(an, bn)
// so E[log σ] = (log bn − ψ(an))/2 and Var(log σ) = ψ′(an)/4 (closed form).
func TestConjugateRegression(t *testing.T) {
	x := [][]float64{{1, 0}, {1, 1}, {1, 2}, {1, 3}, {1, 4}}
	y := []float64{1, 3, 2, 5, 4}
	m := newRegression(x, y, true, 2, 1)
	mcmctest.CheckGradient(t, m, 1e-6, &mcmctest.GradSettings{Seed: 3})
	fit, err := mcmc.Run(context.Background(), m, &mcmc.Settings{Seed: 11})
	if err != nil {
		t.Fatal(err)
	}
	checkConverged(t, fit)
	an, bn := 4.5, 663.0/172
	want := []struct {
		name     string
		mean, sd float64
	}{
		{"beta[0]", 85.0 / 86, math.Sqrt(0.39699065131731437)},
		{"beta[1]", 39.0 / 43, math.Sqrt(0.07683690025496408)},
	}
	for _, w := range want {
		d := fit.Column(w.name)
		checkMoment(t, w.name, d, w.mean, 4)
		if sd := mcmc.SummarizeDraws(w.name, d).SD; math.Abs(sd/w.sd-1) > 0.1 {
			t.Errorf("%s: sd %.5g, want %.5g within 10%%", w.name, sd, w.sd)
		}
	}
	sigma := fit.Column("sigma")
	checkMoment(t, "sigma^2", transformed(sigma, func(s float64) float64 { return s * s }), bn/(an-1), 4)
	logSigma := transformed(sigma, math.Log)
	checkMoment(t, "log sigma", logSigma, (math.Log(bn)-mathext.Digamma(an))/2, 4)
	wantSD := math.Sqrt(mathext.Zeta(2, an)) / 2 // ψ′(a) = ζ(2, a)
	if sd := mcmc.SummarizeDraws("log sigma", logSigma).SD; math.Abs(sd/wantSD-1) > 0.1 {
		t.Errorf("log sigma: sd %.5g, want %.5g within 10%%", sd, wantSD)
	}
}

// Norris data, NIST StRD (REFERENCES.md section 1).
var (
	norrisY = []float64{0.1, 338.8, 118.1, 888.0, 9.2, 228.1, 668.5, 998.5, 449.1, 778.9, 559.2, 0.3, 0.1, 778.1, 668.8, 339.3, 448.9, 10.8, 557.7, 228.3, 998.0, 888.8, 119.6, 0.3, 0.6, 557.6, 339.3, 888.0, 998.5, 778.9, 10.2, 117.6, 228.9, 668.4, 449.2, 0.2}
	norrisX = []float64{0.2, 337.4, 118.2, 884.6, 10.1, 226.5, 666.3, 996.3, 448.6, 777.0, 558.2, 0.4, 0.6, 775.5, 666.9, 338.0, 447.5, 11.6, 556.0, 228.1, 995.8, 887.6, 120.2, 0.3, 0.3, 556.8, 339.1, 887.2, 999.0, 779.0, 11.1, 118.3, 229.2, 669.1, 448.9, 0.5}
)

// TestNorrisFlatPrior samples the Norris regression under the flat prior
// p(β, σ²) ∝ 1/σ² (BDA3 section 14.2): β | y ~ t_{n−k}(β̂, s²(XᵀX)⁻¹), so
// the posterior means are NIST's certified B0 = −0.262323073774029,
// B1 = 1.00211681802045, the sds are the certified standard errors times
// sqrt(34/32) (0.2399835428983626, 0.000443024450671475) and
// E[σ² | y] = 0.8317937040444483 (REFERENCES.md section 7, derived).
func TestNorrisFlatPrior(t *testing.T) {
	x := make([][]float64, len(norrisX))
	for i, v := range norrisX {
		x[i] = []float64{1, v}
	}
	m := newRegression(x, norrisY, false, 0, 0)
	mcmctest.CheckGradient(t, m, 1e-5, &mcmctest.GradSettings{Seed: 4, Radius: 1})
	fit, err := mcmc.Run(context.Background(), m, &mcmc.Settings{Seed: 5})
	if err != nil {
		t.Fatal(err)
	}
	checkConverged(t, fit)
	for _, w := range []struct {
		name     string
		mean, sd float64
	}{
		{"beta[0]", -0.262323073774029, 0.2399835428983626},
		{"beta[1]", 1.00211681802045, 0.000443024450671475},
	} {
		d := fit.Column(w.name)
		checkMoment(t, w.name, d, w.mean, 4)
		if sd := mcmc.SummarizeDraws(w.name, d).SD; math.Abs(sd/w.sd-1) > 0.1 {
			t.Errorf("%s: sd %.5g, want %.5g within 10%%", w.name, sd, w.sd)
		}
	}
	s2 := transformed(fit.Column("sigma"), func(s float64) float64 { return s * s })
	checkMoment(t, "sigma^2", s2, 0.8317937040444483, 4)
}

// scales100 returns 100 standard deviations log-spaced from 0.01 to 100.
func scales100() []float64 {
	s := make([]float64, 100)
	for i := range s {
		s[i] = math.Exp(math.Log(0.01) + float64(i)/99*math.Log(1e4))
	}
	return s
}

// TestGaussian100 samples N(μ, diag σ²) with σ log-spaced over four orders
// of magnitude (0.01 to 100) and μ_i = i/10: means within 4 MCSE and
// variances within 5 MCSE of (x − μ)² (closed form), and the adapted inverse
// metric recovers σ² within a factor 2 in every chain.
func TestGaussian100(t *testing.T) {
	sigma := scales100()
	mu := make([]float64, len(sigma))
	for i := range mu {
		mu[i] = float64(i) / 10
	}
	m := &gaussian{mu: mu, sigma: sigma}
	fit, err := mcmc.Run(context.Background(), m, &mcmc.Settings{Seed: 2})
	if err != nil {
		t.Fatal(err)
	}
	checkConverged(t, fit)
	for i, name := range fit.Names {
		d := fit.Column(name)
		checkMoment(t, name, d, mu[i], 4)
		sq := transformed(d, func(v float64) float64 { return (v - mu[i]) * (v - mu[i]) })
		checkMoment(t, name+" variance", sq, sigma[i]*sigma[i], 5)
	}
	for c, ch := range fit.Chains {
		for i, v := range ch.Stats.InvMetric {
			if r := v / (sigma[i] * sigma[i]); r < 0.5 || r > 2 {
				t.Errorf("chain %d coordinate %d: inverse metric %.3g, want σ² = %.3g within a factor 2", c+1, i+1, v, sigma[i]*sigma[i])
			}
		}
		if ch.Stats.TreeDepthHits != 0 {
			t.Errorf("chain %d: %d tree-depth hits", c+1, ch.Stats.TreeDepthHits)
		}
	}
}

// TestCorrelated2 samples a bivariate normal with sds 1 and 3 and
// correlation 0.95: E[a] = E[b] = 0, E[a²] = 1, E[b²] = 9, E[ab] = 2.85
// (closed form), each within 4 MCSE.
func TestCorrelated2(t *testing.T) {
	fit, err := mcmc.Run(context.Background(), correlated2{1, 3, 0.95}, &mcmc.Settings{Seed: 8})
	if err != nil {
		t.Fatal(err)
	}
	checkConverged(t, fit)
	a, b := fit.Column("a"), fit.Column("b")
	checkMoment(t, "a", a, 0, 4)
	checkMoment(t, "b", b, 0, 4)
	checkMoment(t, "a^2", transformed(a, func(v float64) float64 { return v * v }), 1, 4)
	checkMoment(t, "b^2", transformed(b, func(v float64) float64 { return v * v }), 9, 4)
	ab := make([][]float64, len(a))
	for c := range a {
		ab[c] = make([]float64, len(a[c]))
		for i := range a[c] {
			ab[c][i] = a[c][i] * b[c][i]
		}
	}
	checkMoment(t, "ab", ab, 2.85, 4)
	for c, ch := range fit.Chains {
		if r := ch.Stats.InvMetric[1] / ch.Stats.InvMetric[0]; r < 9/2.0 || r > 9*2.0 {
			t.Errorf("chain %d: metric ratio %.3g, want 9 (variance ratio) within a factor 2", c+1, r)
		}
	}
}

// TestNealFunnel samples Neal's funnel (Neal 2003, Annals of Statistics
// 31(3):705-767, section 8; 10 dimensions, centred) whose neck no single step
// size can explore: divergences must be detected, reported per chain, and
// the verdict must be "not trustworthy" with a divergence reason.
func TestNealFunnel(t *testing.T) {
	fit, err := mcmc.Run(context.Background(), funnel{d: 10}, &mcmc.Settings{Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	total := 0
	for _, ch := range fit.Chains {
		total += ch.Stats.Divergences
	}
	if total == 0 {
		t.Fatalf("no divergences on Neal's funnel")
	}
	v := mcmc.Judge(fit, mcmc.Summarize(fit))
	if v.Trustworthy {
		t.Fatalf("verdict trustworthy on Neal's funnel")
	}
	found := false
	for _, r := range v.Reasons {
		if strings.Contains(r, "divergent") {
			found = true
		}
	}
	if !found {
		t.Errorf("reasons %q do not mention divergences", v.Reasons)
	}
	t.Logf("%d divergences; reasons: %q", total, v.Reasons)
}

// TestReproducible checks that the draws CSV is byte-identical with
// GOMAXPROCS 1 and 4 for the same seed, and differs for another seed.
func TestReproducible(t *testing.T) {
	run := func(procs int, seed uint64) []byte {
		old := runtime.GOMAXPROCS(procs)
		defer runtime.GOMAXPROCS(old)
		fit, err := mcmc.Run(context.Background(), correlated2{1, 3, 0.95}, &mcmc.Settings{Seed: seed, Warmup: 300, Draws: 300})
		if err != nil {
			t.Fatal(err)
		}
		var b bytes.Buffer
		if err := mcmc.WriteDraws(&b, fit); err != nil {
			t.Fatal(err)
		}
		return b.Bytes()
	}
	a, b := run(1, 42), run(4, 42)
	if !bytes.Equal(a, b) {
		t.Errorf("draws differ between GOMAXPROCS 1 and 4")
	}
	if bytes.Equal(a, run(4, 43)) {
		t.Errorf("draws equal for seeds 42 and 43")
	}
}

// TestOnlySomeChains runs chains of a four-chain run as separate runs
// (Settings.Only) and requires each chain's draws and sampler statistics,
// timings aside, to be bit for bit those of the same chain in the whole
// run; the Recorder sees positions in the Fit.
func TestOnlySomeChains(t *testing.T) {
	set := mcmc.Settings{Chains: 4, Seed: 7, Warmup: 150, Draws: 100}
	whole, err := mcmc.Run(context.Background(), correlated2{1, 3, 0.9}, &set)
	if err != nil {
		t.Fatal(err)
	}
	for _, only := range [][]int{{0}, {2}, {3}, {1, 3}} {
		s := set
		s.Only = only
		rec := &countRecorder{}
		s.Recorder = rec
		part, err := mcmc.Run(context.Background(), correlated2{1, 3, 0.9}, &s)
		if err != nil {
			t.Fatal(err)
		}
		if len(part.Chains) != len(only) {
			t.Fatalf("Only %v: %d chains", only, len(part.Chains))
		}
		for i, c := range only {
			got, want := part.Chains[i], whole.Chains[c]
			if !mat.Equal(got.Draws, want.Draws) {
				t.Errorf("Only %v: chain %d's draws differ from the whole run's", only, c)
			}
			gs, ws := got.Stats, want.Stats
			gs.WarmupSeconds, gs.SamplingSeconds, ws.WarmupSeconds, ws.SamplingSeconds = 0, 0, 0, 0
			if !reflect.DeepEqual(gs, ws) {
				t.Errorf("Only %v: chain %d's statistics %+v, whole run's %+v", only, c, gs, ws)
			}
		}
		if max := rec.maxChain(); max != len(only)-1 {
			t.Errorf("Only %v: Recorder saw chain positions up to %d", only, max)
		}
	}
	for _, only := range [][]int{{}, {4}, {-1}, {2, 1}, {1, 1}} {
		s := set
		s.Only = only
		if _, err := mcmc.Run(context.Background(), correlated2{1, 3, 0.9}, &s); err == nil {
			t.Errorf("Only %v: got nil error", only)
		}
	}
}

// countRecorder remembers the largest chain position it was given.
type countRecorder struct {
	mu  sync.Mutex
	max int
}

func (r *countRecorder) Record(chain, iter int, warmup bool) error {
	r.mu.Lock()
	defer r.mu.Unlock()
	r.max = max(r.max, chain)
	return nil
}

func (r *countRecorder) maxChain() int {
	r.mu.Lock()
	defer r.mu.Unlock()
	return r.max
}

// TestDrawsRoundTrip writes and reads a fit: names, shape and every value
// come back exactly, and the layout is the tidy one.
func TestDrawsRoundTrip(t *testing.T) {
	fit, err := mcmc.Run(context.Background(), correlated2{1, 3, 0.5}, &mcmc.Settings{Chains: 3, Seed: 1, Warmup: 100, Draws: 50})
	if err != nil {
		t.Fatal(err)
	}
	var b bytes.Buffer
	if err := mcmc.WriteDraws(&b, fit); err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(b.String(), "\n")
	if lines[0] != ".chain,.iteration,.draw,a,b" || !strings.HasPrefix(lines[1], "1,1,1,") ||
		!strings.HasPrefix(lines[51], "2,1,51,") || !strings.HasPrefix(lines[150], "3,50,150,") {
		t.Errorf("unexpected layout: %q %q %q %q", lines[0], lines[1], lines[51], lines[150])
	}
	back, err := mcmc.ReadDraws(bytes.NewReader(b.Bytes()))
	if err != nil {
		t.Fatal(err)
	}
	if len(back.Chains) != 3 || back.NumDraws() != 150 {
		t.Fatalf("read %d chains, %d draws; want 3, 150", len(back.Chains), back.NumDraws())
	}
	for c := range fit.Chains {
		for _, name := range fit.Names {
			want, got := fit.Column(name)[c], back.Column(name)[c]
			for i := range want {
				if math.Float64bits(got[i]) != math.Float64bits(want[i]) {
					t.Fatalf("chain %d %s[%d]: got %v, want %v", c+1, name, i, got[i], want[i])
				}
			}
		}
	}
	if fit.Column("nope") != nil {
		t.Errorf("Column of an absent name is not nil")
	}
}

func TestReadDrawsErrors(t *testing.T) {
	for _, c := range []struct{ name, in, want string }{
		{"empty", "", "line 1"},
		{"bad header", "chain,iteration,draw,a\n", "want \".chain\""},
		{"not a number", ".chain,.iteration,.draw,a\n1,1,1,x\n", `line 2, column "a"`},
		{"gap", ".chain,.iteration,.draw,a\n1,1,1,0\n1,3,2,0\n", `line 3, column ".iteration"`},
		{"unequal", ".chain,.iteration,.draw,a\n1,1,1,0\n1,2,2,0\n2,1,3,0\n", "equal lengths"},
		{"chain order", ".chain,.iteration,.draw,a\n2,1,1,0\n", `column ".chain"`},
		{"duplicate", ".chain,.iteration,.draw,a,a\n", "duplicate"},
	} {
		_, err := mcmc.ReadDraws(strings.NewReader(c.in))
		var pe *mcmc.ParseError
		if err == nil || !errors.As(err, &pe) || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: got %v, want a ParseError containing %q", c.name, err, c.want)
		}
	}
}

// TestJudge checks each verdict rule on constructed inputs.
func TestJudge(t *testing.T) {
	fit := readFit(t, "testdata/own_draws.csv")
	v := mcmc.Judge(fit, mcmc.Summarize(fit))
	if v.Trustworthy {
		t.Fatalf("own_draws (R-hat 1.14 for wide_chain) judged trustworthy")
	}
	joined := strings.Join(v.Reasons, "; ")
	for _, want := range []string{"R-hat above 1.01", "worst wide_chain", "bulk ESS below 400", "tail ESS below 400"} {
		if !strings.Contains(joined, want) {
			t.Errorf("reasons %q lack %q", joined, want)
		}
	}
	if strings.Contains(joined, "constant") {
		t.Errorf("constant parameter counted as a failure: %q", joined)
	}
	if len(v.Warnings) == 0 || !strings.Contains(v.Warnings[0], "not checked") {
		t.Errorf("warnings %q should say sampler statistics were not checked", v.Warnings)
	}

	good := []mcmc.Summary{{Parameter: "p", SD: 1, Rhat: 1.001, ESSBulk: 1000, ESSTail: 900}}
	stats := mcmc.ChainStats{GradientEvaluations: 10, EBFMI: 0.9}
	f := &mcmc.Fit{Names: []string{"p"}, Chains: []mcmc.Chain{{Stats: stats}, {Stats: stats}}}
	if v := mcmc.Judge(f, good); !v.Trustworthy {
		t.Errorf("good fit judged untrustworthy: %v", v.Reasons)
	}
	f.Chains[1].Stats.EBFMI = 0.2
	if v := mcmc.Judge(f, good); v.Trustworthy || !strings.Contains(v.Reasons[0], "E-BFMI") || !strings.Contains(v.Reasons[0], "chain 2") {
		t.Errorf("low E-BFMI: got %+v", v)
	}
	f.Chains[1].Stats.EBFMI = 0.9
	f.Chains[0].Stats.Divergences = 3
	if v := mcmc.Judge(f, good); v.Trustworthy || !strings.Contains(v.Reasons[0], "3 divergent") {
		t.Errorf("divergences: got %+v", v)
	}
	f.Chains[0].Stats.Divergences = 0
	f.Chains[0].Stats.TreeDepthHits = 5
	if v := mcmc.Judge(f, good); !v.Trustworthy || len(v.Warnings) != 1 {
		t.Errorf("tree-depth hits should only warn: got %+v", v)
	}
	bad := []mcmc.Summary{{Parameter: "q", SD: 1, Rhat: math.NaN(), ESSBulk: math.NaN(), ESSTail: 500}}
	if v := mcmc.Judge(f, bad); v.Trustworthy || len(v.Reasons) != 2 {
		t.Errorf("NaN diagnostics of a varying parameter: got %+v", v)
	} else if !strings.Contains(v.Reasons[0], "not computable") {
		t.Errorf("NaN R-hat should read as not computable: got %q", v.Reasons[0])
	}
	// A chain that never moved (spillway fit --chains 1 --warmup 20 --draws
	// 20 on the demo left every demand parameter at its initial value):
	// nothing varies, so nothing is computable, and the fit is not
	// trustworthy even without divergences. It used to pass silently, and
	// the console printed "max R-hat 0.000, min bulk ESS 1e300".
	stuck := []mcmc.Summary{
		{Parameter: "a", Mean: 1, Rhat: math.NaN(), ESSBulk: math.NaN(), ESSTail: math.NaN()},
		{Parameter: "b", Mean: 2, Rhat: math.NaN(), ESSBulk: math.NaN(), ESSTail: math.NaN()},
	}
	if v := mcmc.Judge(f, stuck); v.Trustworthy || len(v.Reasons) != 1 || !strings.Contains(v.Reasons[0], "not computable") {
		t.Errorf("stuck chains: got %+v", v)
	}
	if r, b, e := mcmc.Worst(stuck); !math.IsNaN(r) || !math.IsNaN(b) || !math.IsNaN(e) {
		t.Errorf("Worst of stuck chains: got %v %v %v, want NaN", r, b, e)
	}
	mixed := append(append([]mcmc.Summary(nil), good...), stuck[0], mcmc.Summary{Parameter: "c", SD: 1, Rhat: 1.02, ESSBulk: 300, ESSTail: 800})
	if r, b, e := mcmc.Worst(mixed); r != 1.02 || b != 300 || e != 800 {
		t.Errorf("Worst: got %v %v %v, want 1.02 300 800 (the constant parameter skipped)", r, b, e)
	}
	if r, _, _ := mcmc.Worst(append(mixed, bad...)); !math.IsNaN(r) {
		t.Errorf("Worst with a NaN R-hat: got %v, want NaN", r)
	}
}

type countingRecorder struct {
	n       atomic.Int64
	warm    atomic.Int64
	stopAt  int64
	lastBad atomic.Bool
}

func (r *countingRecorder) Record(chain, iter int, warmup bool) error {
	n := r.n.Add(1)
	if warmup {
		r.warm.Add(1)
	}
	if iter < 1 || iter > 30 || chain < 0 || chain > 1 || warmup != (iter <= 10) {
		r.lastBad.Store(true)
	}
	if r.stopAt > 0 && n >= r.stopAt {
		return errStop
	}
	return nil
}

var errStop = errors.New("stop")

func TestRecorderAndCancel(t *testing.T) {
	rec := &countingRecorder{}
	_, err := mcmc.Run(context.Background(), correlated2{1, 1, 0}, &mcmc.Settings{Chains: 2, Warmup: 10, Draws: 20, Recorder: rec})
	if err != nil {
		t.Fatal(err)
	}
	if rec.n.Load() != 60 || rec.warm.Load() != 20 || rec.lastBad.Load() {
		t.Errorf("recorder saw %d calls (%d warm-up), bad arguments %v; want 60, 20, false", rec.n.Load(), rec.warm.Load(), rec.lastBad.Load())
	}
	stop := &countingRecorder{stopAt: 5}
	if _, err := mcmc.Run(context.Background(), correlated2{1, 1, 0}, &mcmc.Settings{Chains: 2, Warmup: 10, Draws: 20, Recorder: stop}); !errors.Is(err, errStop) {
		t.Errorf("recorder error: got %v, want errStop", err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if _, err := mcmc.Run(ctx, correlated2{1, 1, 0}, nil); !errors.Is(err, context.Canceled) {
		t.Errorf("cancelled context: got %v", err)
	}
}

// nowhere has no point with a finite density.
type nowhere struct{ *gaussian }

func (nowhere) LogProbGrad(grad, x []float64) float64 { return math.Inf(-1) }
func (n nowhere) Clone() mcmc.Target                  { return n }

// halfPlane is finite only for x[0] > 1.5, rarely hit by uniform(−2, 2).
type halfPlane struct{ correlated2 }

func (h halfPlane) LogProbGrad(grad, x []float64) float64 {
	if x[0] <= 1.5 {
		return math.Inf(-1)
	}
	return h.correlated2.LogProbGrad(grad, x)
}
func (h halfPlane) Clone() mcmc.Target { return h }

func TestInit(t *testing.T) {
	_, err := mcmc.Run(context.Background(), nowhere{&gaussian{mu: []float64{0}, sigma: []float64{1}}}, &mcmc.Settings{Warmup: 10, Draws: 10})
	var ie *mcmc.InitError
	if !errors.As(err, &ie) || ie.Tries != mcmc.InitTries {
		t.Errorf("no finite point: got %v, want *InitError", err)
	}
	// Retries find the region x[0] > 1.5 (probability 1/8 per try).
	fit, err := mcmc.Run(context.Background(), halfPlane{correlated2{1, 1, 0}}, &mcmc.Settings{Chains: 2, Warmup: 20, Draws: 20})
	if err != nil {
		t.Fatalf("half plane: %v", err)
	}
	for _, ch := range fit.Column("a") {
		for _, v := range ch {
			if v <= 1.5 {
				t.Fatalf("draw %v outside the support", v)
			}
		}
	}
	// A user Init is used as given.
	_, err = mcmc.Run(context.Background(), correlated2{1, 1, 0}, &mcmc.Settings{Chains: 1, Warmup: 10, Draws: 10,
		Init: func(chain int, dst []float64) bool { return false }})
	if err == nil {
		t.Errorf("failing Init: got nil error")
	}
}

// TestSettingsErrors: unusable settings are errors, not panics.
func TestSettingsErrors(t *testing.T) {
	for _, s := range []mcmc.Settings{{Chains: -1}, {Draws: -2}, {TargetAccept: 1.5}, {WarmupAccept: 1}, {WarmupAccept: -0.5}, {MaxTreeDepth: -1}, {Warmup: -5}} {
		if _, err := mcmc.Run(context.Background(), correlated2{1, 1, 0}, &s); err == nil {
			t.Errorf("settings %+v: got nil error", s)
		}
	}
}

// TestSkewedGamma samples Gamma(0.5, 1) on the log scale, a skewed target
// that exposes biased trajectory sampling (a variant that always moves to
// the new subtree gives E[x] ≈ 0.73). Closed forms: E[x] = a = 0.5,
// E[x²] = a(a+1) = 0.75, E[log x] = ψ(0.5) = −γ − 2 log 2. The curvature
// e^u of the right tail makes a few transitions divergent with one step
// size (as it would in any HMC), so only R-hat and ESS are required here.
func TestSkewedGamma(t *testing.T) {
	m := logGamma{a: 0.5}
	mcmctest.CheckGradient(t, m, 1e-6, &mcmctest.GradSettings{Seed: 1})
	fit, err := mcmc.Run(context.Background(), m, &mcmc.Settings{Seed: 6})
	if err != nil {
		t.Fatal(err)
	}
	for _, s := range mcmc.Summarize(fit) {
		if !(s.Rhat < 1.01) || !(s.ESSBulk > 400) || !(s.ESSTail > 400) {
			t.Errorf("%s: rhat %.4f, ess_bulk %.0f, ess_tail %.0f", s.Parameter, s.Rhat, s.ESSBulk, s.ESSTail)
		}
	}
	x := fit.Column("x")
	checkMoment(t, "x", x, 0.5, 4)
	checkMoment(t, "x^2", transformed(x, func(v float64) float64 { return v * v }), 0.75, 4)
	checkMoment(t, "log x", transformed(x, math.Log), mathext.Digamma(0.5), 4)
}

// TestInitialMetric: a start metric at the target's scales keeps the
// posterior and spares the warm-up the long trajectories of the identity
// start. On 20 independent normals with sds from 0.003 to 3 (three orders of
// magnitude, as a region panel's coordinates), the identity start hits the
// maximum tree depth until the first metric window ends; the start at the
// true variances does not, and takes fewer warm-up gradients. Moments are
// checked against the closed form in both runs. Explicit ones give the
// identity's draws bit for bit (the windows' shrinkage toward 1e-3 times
// the start metric is then Stan's).
func TestInitialMetric(t *testing.T) {
	const n = 20
	mu, sigma, vars, ones := make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n)
	for i := range sigma {
		sigma[i] = 0.003 * math.Pow(1000, float64(i)/(n-1))
		mu[i] = float64(i) / 10
		vars[i] = sigma[i] * sigma[i]
		ones[i] = 1
	}
	m := &gaussian{mu: mu, sigma: sigma}
	set := mcmc.Settings{Chains: 2, Warmup: 300, Draws: 500, Seed: 11}
	run := func(inv []float64) *mcmc.Fit {
		s := set
		s.InvMetric = inv
		fit, err := mcmc.Run(context.Background(), m, &s)
		if err != nil {
			t.Fatal(err)
		}
		for i, name := range fit.Names {
			checkMoment(t, name, fit.Column(name), mu[i], 4)
		}
		return fit
	}
	warmGrads := func(f *mcmc.Fit) (g, hits int) {
		for _, ch := range f.Chains {
			g += ch.Stats.WarmupGradients
			for _, w := range ch.Stats.Warmup {
				hits += w.TreeDepthHits
			}
		}
		return g, hits
	}
	ident, scaled := run(nil), run(vars)
	gi, hi := warmGrads(ident)
	gs, hs := warmGrads(scaled)
	t.Logf("warm-up gradients: identity start %d (%d depth hits), start at the scales %d (%d depth hits)", gi, hi, gs, hs)
	if hi == 0 || hs != 0 {
		t.Errorf("tree-depth hits in warm-up: identity %d, want > 0; start at the scales %d, want 0", hi, hs)
	}
	if 2*gs > gi {
		t.Errorf("warm-up gradients: start at the scales %d, want under half the identity's %d", gs, gi)
	}
	// The windows shrink toward 1e-3 times the start metric: from the start
	// at the scales every adapted variance is σ² within a factor 3 (a
	// window of a few hundred correlated draws), where Stan's shrinkage
	// toward 1e-3 inflates the smallest (σ = 0.003) more.
	for c, ch := range scaled.Chains {
		for i, v := range ch.Stats.InvMetric {
			if r := v / vars[i]; r < 1.0/3 || r > 3 {
				t.Errorf("start at the scales, chain %d coordinate %d: adapted variance %.3g, want σ² = %.3g within a factor 3", c+1, i+1, v, vars[i])
			}
		}
		t.Logf("chain %d, σ = 0.003: adapted variance / σ² %.2f from the identity start, %.2f from the scales", c+1, ident.Chains[c].Stats.InvMetric[0]/vars[0], ch.Stats.InvMetric[0]/vars[0])
		if r := ident.Chains[c].Stats.InvMetric[0] / vars[0]; r < 3 {
			t.Errorf("identity start, chain %d: smallest coordinate's adapted variance %.3g is σ² = %.3g times %.2f, want Stan's shrinkage to inflate it over 3", c+1, ident.Chains[c].Stats.InvMetric[0], vars[0], r)
		}
	}
	withOnes := run(ones)
	for c := range ident.Chains {
		if !mat.Equal(ident.Chains[c].Draws, withOnes.Chains[c].Draws) {
			t.Errorf("chain %d: explicit identity metric changed the draws", c+1)
		}
	}
	for _, bad := range [][]float64{vars[:3], append(append([]float64(nil), vars[:n-1]...), 0), append(append([]float64(nil), vars[:n-1]...), math.Inf(1))} {
		s := set
		s.InvMetric = bad
		if _, err := mcmc.Run(context.Background(), m, &s); err == nil {
			t.Errorf("initial metric %v: got nil error", bad[len(bad)-1])
		}
	}
}

// TestWarmupStretches: the warm-up's stretches cover its iterations in
// order, one per metric window plus the terminal buffer, and their
// gradients add up to the warm-up's, which with the sampling's make the
// chain's total.
func TestWarmupStretches(t *testing.T) {
	const warm = 300
	fit, err := mcmc.Run(context.Background(), correlated2{1, 3, 0.5}, &mcmc.Settings{Chains: 1, Warmup: warm, Draws: 100, Seed: 3})
	if err != nil {
		t.Fatal(err)
	}
	st := fit.Chains[0].Stats
	if got, want := len(st.Warmup), len(mcmc.Windows(warm))+1; got != want {
		t.Fatalf("%d stretches, want %d (windows %v and the terminal buffer)", got, want, mcmc.Windows(warm))
	}
	next, grads := 0, 0
	for i, w := range st.Warmup {
		if w.Start != next || w.Iterations < 1 {
			t.Errorf("stretch %d starts at %d with %d iterations, want start %d", i, w.Start, w.Iterations, next)
		}
		if i < len(st.Warmup)-1 && w.Start+w.Iterations-1 != mcmc.Windows(warm)[i] {
			t.Errorf("stretch %d ends at %d, want the window end %d", i, w.Start+w.Iterations-1, mcmc.Windows(warm)[i])
		}
		if !(w.MeanTreeDepth >= 1) || !(w.MeanStepSize > 0) {
			t.Errorf("stretch %d: mean depth %v, step %v", i, w.MeanTreeDepth, w.MeanStepSize)
		}
		next += w.Iterations
		grads += w.Gradients
	}
	if next != warm || grads != st.WarmupGradients {
		t.Errorf("stretches cover %d iterations and %d gradients, want %d and %d", next, grads, warm, st.WarmupGradients)
	}
	if sampling := st.GradientEvaluations - st.WarmupGradients; sampling < 100 {
		t.Errorf("sampling gradients %d, want at least one per draw", sampling)
	}
}

// TestWarmupAccept samples the 100-dimensional normal of TestGaussian100
// with the warm-up's metric windows at target acceptance 0.6 and the
// terminal window and draws at 0.95, against the whole run at 0.95: the
// draws' mean acceptance and step size are the 0.95 run's (within 0.03 and
// 25%), while the windows before the last metric update take larger steps
// and fewer gradients; the moments hold.
func TestWarmupAccept(t *testing.T) {
	sigma := scales100()
	mu := make([]float64, len(sigma))
	m := &gaussian{mu: mu, sigma: sigma}
	run := func(s mcmc.Settings) *mcmc.Fit {
		s.Chains, s.Seed = 2, 6
		fit, err := mcmc.Run(context.Background(), m, &s)
		if err != nil {
			t.Fatal(err)
		}
		return fit
	}
	plain := run(mcmc.Settings{TargetAccept: 0.95})
	split := run(mcmc.Settings{TargetAccept: 0.95, WarmupAccept: 0.6})
	checkConverged(t, split)
	for i, name := range split.Names {
		checkMoment(t, name, split.Column(name), mu[i], 4)
	}
	for c := range split.Chains {
		p, s := plain.Chains[c].Stats, split.Chains[c].Stats
		if math.Abs(s.MeanAccept-p.MeanAccept) > 0.03 || s.MeanAccept < 0.9 {
			t.Errorf("chain %d: draws' mean acceptance %.3f, want the 0.95 run's %.3f", c+1, s.MeanAccept, p.MeanAccept)
		}
		if r := s.StepSize / p.StepSize; r < 0.8 || r > 1.25 {
			t.Errorf("chain %d: sampling step %.4f, want the 0.95 run's %.4f within 25%%", c+1, s.StepSize, p.StepSize)
		}
		n := len(s.Warmup) - 1 // the stretches before the terminal window
		for i := 1; i < n; i++ {
			if r := s.Warmup[i].MeanStepSize / p.Warmup[i].MeanStepSize; r < 1.3 {
				t.Errorf("chain %d, warm-up stretch %d: step %.4f against %.4f at 0.95, want at least 1.3 times", c+1, i, s.Warmup[i].MeanStepSize, p.Warmup[i].MeanStepSize)
			}
		}
		if s.WarmupGradients >= p.WarmupGradients {
			t.Errorf("chain %d: %d warm-up gradients, want fewer than the 0.95 run's %d", c+1, s.WarmupGradients, p.WarmupGradients)
		}
		t.Logf("chain %d: warm-up gradients %d against %d, step %.4f against %.4f, acceptance %.3f against %.3f", c+1, s.WarmupGradients, p.WarmupGradients, s.StepSize, p.StepSize, s.MeanAccept, p.MeanAccept)
	}
}
