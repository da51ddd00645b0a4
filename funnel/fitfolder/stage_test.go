package fitfolder

import (
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"spillway/funnel/mcmc"
)

// TestSummaryCSV writes a stage's summary.csv from the sampler's summaries
// and reads it back.
func TestSummaryCSV(t *testing.T) {
	src, err := os.Open("../mcmc/testdata/tiny_draws.csv")
	if err != nil {
		t.Fatal(err)
	}
	defer src.Close()
	fit, err := mcmc.ReadDraws(src)
	if err != nil {
		t.Fatal(err)
	}
	sums := mcmc.Summarize(fit)
	files := map[string][]byte{}
	st := &Stage{Name: "demand", Params: ParamsOf(sums), Draws: fit}
	if err := st.files(files); err != nil {
		t.Fatal(err)
	}
	b := files["demand/summary.csv"]
	if first := strings.SplitN(string(b), "\n", 2)[0]; first != "parameter,mean,sd,q05,q50,q95,rhat,ess_bulk,ess_tail,mcse_mean" {
		t.Errorf("header %q", first)
	}
	dir := t.TempDir()
	for name, b := range files {
		p := filepath.Join(dir, name)
		os.MkdirAll(filepath.Dir(p), 0o755)
		if err := os.WriteFile(p, b, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	back, err := readStage(filepath.Join(dir, "demand"), "demand")
	if err != nil {
		t.Fatal(err)
	}
	for i := range sums {
		g, w := back.Params[i], sums[i]
		// ess_tail of x is NaN (all draws at or below q95; R gives NA).
		if g.Name != w.Parameter || g.Mean != w.Mean || g.Rhat != w.Rhat || !(g.ESSTail == w.ESSTail || math.IsNaN(w.ESSTail) && math.IsNaN(g.ESSTail)) {
			t.Errorf("row %d: got %+v, want %+v", i, g, w)
		}
	}
	draws, err := readDraws(filepath.Join(dir, "demand"))
	if err != nil || draws.NumDraws() != fit.NumDraws() {
		t.Errorf("draws read back: %v", err)
	}
}

// TestVerdictText writes verdict.txt and reads it back.
func TestVerdictText(t *testing.T) {
	v := VerdictOf([]string{"demand", "outcome"}, []mcmc.Verdict{{Trustworthy: true, Warnings: []string{"slow: 3 hits"}},
		{Reasons: []string{"R-hat above 1.01 for 1 parameter (worst gamma: 1.02)"}}})
	want := "not trustworthy\ndemand: note: slow: 3 hits\noutcome: R-hat above 1.01 for 1 parameter (worst gamma: 1.02)\n"
	if v.Text() != want {
		t.Errorf("verdict.txt:\n%s\nwant:\n%s", v.Text(), want)
	}
	p := filepath.Join(t.TempDir(), "verdict.txt")
	os.WriteFile(p, []byte(v.Text()), 0o644)
	back, err := readVerdict(p)
	if err != nil || back.Trustworthy || len(back.Reasons) != 2 || back.Reasons[0] != v.Reasons[0] || back.Reasons[1] != v.Reasons[1] {
		t.Errorf("read back %+v, %v; want %+v", back, err, v)
	}
}
