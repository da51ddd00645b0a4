package model

import (
	"math"
	"strings"
	"testing"
)

// stageCheck is the PriorCheck of the test model's three stages.
func stageCheck(t *testing.T) PriorCheck {
	st := stages(t, testScaled(60, 1), Options{})
	return func(name string, p Prior) (has bool, which int, err error) {
		for _, s := range st {
			h, w, err := s.CheckPrior(name, p)
			if err != nil {
				return true, w, err
			}
			has = has || h
		}
		return has, 0, nil
	}
}

func TestReadPriors(t *testing.T) {
	check := stageCheck(t)
	good := "parameter,family,p1,p2\r\nK[video],gamma,2,4\ngamma, HalfNormal ,0.3,\nsigma_q,jeffreys,,\nmu_q,flat,,\nb_q,fixed,0,\n"
	p, err := ReadPriors(strings.NewReader(good), "p.csv", check)
	if err != nil {
		t.Fatal(err)
	}
	if p["K[video]"] != (Prior{Gamma, 2, 4}) || p["gamma"] != (Prior{HalfNormal, 0.3, 0}) || p["sigma_q"].Family != Jeffreys || p["b_q"] != (Prior{Fixed, 0, 0}) {
		t.Errorf("got %v", p)
	}
	long := strings.Repeat("x", 10000)
	for _, c := range []struct{ text, want string }{
		{"", "p.csv:1: empty file"},
		{"parameter,family,p1\n", "p.csv:1: header has 3 columns"},
		{"parameter,kind,p1,p2\n", "p.csv:1:2: header column 2"},
		{"parameter,family,p1,p2\nalpha[x],normal,0,1\n", "p.csv:2:1: no parameter named \"alpha[x]\""},
		{"parameter,family,p1,p2\ngamma,normal,0,1\ngamma,normal,0,2\n", "p.csv:3:1: parameter gamma already has a prior on line 2"},
		{"parameter,family,p1,p2\ngamma,cauchy,0,1\n", "p.csv:2:2: gamma: unknown family \"cauchy\""},
		{"parameter,family,p1,p2\ngamma,normal,zero,1\n", "p.csv:2:3: p1 \"zero\" is not a number"},
		{"parameter,family,p1,p2\ngamma,normal,0\n", "p.csv:2: row has 3 fields"},
		// a bad p2 is reported at p2's column (4), not the family's
		{"parameter,family,p1,p2\ngamma,normal,0,-1\n", "p.csv:2:4: gamma: normal needs sd p2 > 0"},
		{"parameter,family,p1,p2\nK[video],gamma,2,0\n", "p.csv:2:4: K[video]: gamma needs rate p2 > 0"},
		{"parameter,family,p1,p2\nK[video],gamma,-2,1\n", "p.csv:2:3: K[video]: gamma needs shape p1 > 0"},
		// a fixed sigma at or below zero is outside its support, located
		{"parameter,family,p1,p2\nsigma_q,fixed,-1,\n", "p.csv:2:3: sigma_q: fixed value -1 is outside x > 0"},
		{"parameter,family,p1,p2\nsigma_q,normal,0,1\n", "p.csv:2:2: sigma_q: a scale needs a positive prior"},
		// an sd so small that the sampler has no usable step size
		{"parameter,family,p1,p2\ngamma,normal,0,1e-300\n", "p.csv:2:4: gamma: normal sd p2 1e-300 is outside 1e-06 to 1e+06"},
		{"parameter,family,p1,p2\nsigma_q,halfnormal,1e9,\n", "p.csv:2:3: sigma_q: halfnormal sd p1 1e+09 is outside"},
		// numbers a family does not take are not ignored silently
		{"parameter,family,p1,p2\nmu_q,flat,5,7\n", "p.csv:2:3: mu_q: flat takes no numbers; leave p1 empty"},
		{"parameter,family,p1,p2\ngamma,halfnormal,0.5,2\n", "p.csv:2:4: gamma: halfnormal takes one number, p1; leave p2 empty"},
		{"parameter,family,p1,p2\nb_q,fixed,,\n", "p.csv:2:3: b_q: fixed takes one number, p1; p1 is empty"},
		{"parameter,family,p1,p2\nb_q,normal,0,\n", "p.csv:2:4: b_q: normal takes two numbers, p1 and p2; p2 is empty"},
		// a positive-only family on the intercept, which lies on the real line
		{"parameter,family,p1,p2\nmu_q,halfnormal,0.5,\n", "p.csv:2:2: mu_q: the intercept lies on the real line"},
		{"parameter,family,p1,p2\nmu_y,gamma,2,2\n", "p.csv:2:2: mu_y: the intercept lies on the real line"},
		{"parameter,family,p1,p2\nlam[video],normal,0,1\n", "p.csv:2:2: lam[video]: normal does not fit a parameter on (0, 1)"},
		// a long cell is quoted as a short excerpt
		{"parameter,family,p1,p2\n" + long + ",normal,0,1\n", "p.csv:2:1: no parameter named \"xxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxx...\""},
	} {
		_, err := ReadPriors(strings.NewReader(c.text), "p.csv", check)
		if err == nil || !strings.HasPrefix(err.Error(), c.want) {
			t.Errorf("%.60q: got %v, want prefix %q", c.text, err, c.want)
		}
		if err != nil && len(err.Error()) > 400 {
			t.Errorf("%.60q: message of %d bytes", c.text, len(err.Error()))
		}
	}
}

// Prior log densities against their closed forms: the normal density; the
// half-normal 2/(s sqrt(2 pi)) exp(-x^2/(2 s^2)); Gamma(shape a, rate b)
// b^a/Gamma(a) x^(a-1) e^(-b x) with Gamma(3) = 2; Beta(3, 3) with
// 1/B(3, 3) = 30. LogPdf drops the 2 pi constant, added back here.
func TestPriorLogPdf(t *testing.T) {
	cases := []struct {
		p    Prior
		x    float64
		want float64
	}{
		{Prior{Normal, 0.5, 0.5}, 0.2, -0.5*0.36 - math.Log(0.5) - 0.5*math.Log(2*math.Pi)},
		{Prior{HalfNormal, 0.5, 0}, 0.3, math.Log(2) - 0.5*0.36 - math.Log(0.5) - 0.5*math.Log(2*math.Pi)},
		{Prior{Gamma, 3, 3}, 0.5, 3*math.Log(3) - math.Log(2) + 2*math.Log(0.5) - 1.5},
		{Prior{Beta, 3, 3}, 0.25, math.Log(30) + 2*math.Log(0.25) + 2*math.Log(0.75)},
	}
	for _, c := range cases {
		lp, _ := c.p.LogPdf(c.x)
		konst := 0.0
		if c.p.Family == Normal || c.p.Family == HalfNormal {
			konst = -0.5 * math.Log(2*math.Pi)
		}
		if got := lp + konst; math.Abs(got-c.want) > 1e-12 {
			t.Errorf("%v at %v: got %v, want %v", c.p, c.x, got, c.want)
		}
	}
	if lp, _ := (Prior{HalfNormal, 0.5, 0}).LogPdf(-1); !math.IsInf(lp, -1) {
		t.Error("halfnormal outside its support must be -Inf")
	}
}

// TestReadPriorFileReturns checks return rows: the six-column header,
// each measure and path, the defaults (window all, per 1), and every bad
// row located at its line and column.
func TestReadPriorFileReturns(t *testing.T) {
	check := stageCheck(t)
	sc := retScaled(60, 1)
	good := "parameter,family,p1,p2,window,per\n" +
		"return[video],lognormal90,0.5,3,2023Q2,1000\n" +
		"incremental_via_search[audio],lognormal,400,300,,\n" +
		"return_direct[audio],lognormal90,0.001,0.01,all,\n" +
		"K[video],gamma,2,4,,\n"
	f, err := ReadPriorFile(strings.NewReader(good), "p.csv", check, sc)
	if err != nil {
		t.Fatal(err)
	}
	if len(f.Returns) != 3 || f.Priors["K[video]"] != (Prior{Gamma, 2, 4}) {
		t.Fatalf("got %+v", f)
	}
	r := f.Returns[0]
	if r.Name() != "return[video]" || r.Path != ReturnTotal || r.Measure != ReturnOnSpend || r.Per != 1000 || r.Window.Name != "2023Q2" || r.Line != 2 {
		t.Errorf("row 2: %+v", r)
	}
	if r := f.Returns[1]; r.Path != ReturnViaSearch || r.Measure != Incremental || r.Window.Name != "all" || r.Per != 1 || r.Stated != (Prior{LogNormal, 400, 300}) {
		t.Errorf("row 3: %+v", r)
	}
	if r := f.Returns[2]; r.Path != ReturnDirect || r.Window.From != 0 || r.Window.To != 59 {
		t.Errorf("row 4: %+v", r)
	}
	h := "parameter,family,p1,p2,window,per\n"
	for _, c := range []struct{ text, want string }{
		{h + "return[search],lognormal90,1,2,,\n", "p.csv:2:1: return[search]: search is not an upper-funnel column"},
		{h + "return[video],normal,1,2,,\n", "p.csv:2:2: return[video]: a return takes family lognormal90"},
		{h + "return[video],lognormal90,1,,,\n", "p.csv:2:4: return[video]: lognormal90 takes two numbers, p1 and p2; p2 is empty"},
		{h + "return[video],lognormal90,3,2,,\n", "p.csv:2:4: return[video]: lognormal90 takes the 5% and 95% quantiles, p1 < p2"},
		{h + "return[video],lognormal,0,2,,\n", "p.csv:2:3: return[video]: lognormal takes two numbers > 0"},
		{h + "return[video],lognormal90,1,2,2030Q1,\n", "p.csv:2:5: return[video]: window \"2030Q1\""},
		{h + "return[video],lognormal90,1,2,,-5\n", "p.csv:2:6: return[video]: per must be a number of spend units > 0"},
		{h + "incremental[video],lognormal90,1,2,,1000\n", "p.csv:2:6: incremental[video]: per applies to a return on spend"},
		{h + "return[video],lognormal90,1,2,,\nreturn[video],lognormal90,1,3,,\n", "p.csv:3:1: return[video] already has a prior on line 2"},
		{h + "alpha[video],halfnormal,1,,,\nreturn[video],lognormal90,1,2,,\n", "p.csv:3:1: return[video] sets the prior of alpha[video], which has its own prior on line 2"},
		{h + "return_direct[video],lognormal90,1,2,,\nreturn[video],lognormal90,1,3,,\n", "p.csv:3:1: return[video] and return_direct[video] on line 2 both set the prior of delta[video]"},
		{h + "gamma,halfnormal,1,,2023Q2,\n", "p.csv:2:5: gamma: window is for a return row"},
		{h + "gamma,halfnormal,1,,,3\n", "p.csv:2:6: gamma: per is for a return row"},
		{h + "gamma,lognormal90,1,2,,\n", "p.csv:2:2: gamma: lognormal90 is for a return row"},
		{h + "gamma,conditional,,,,\n", "p.csv:2:2: gamma: unknown family \"conditional\""},
		{h + "return[video],lognormal90,1,2,,x\n", "p.csv:2:6: per \"x\" is not a number"},
		{"parameter,family,p1,p2,window\n", "p.csv:1: header has 5 columns"},
	} {
		_, err := ReadPriorFile(strings.NewReader(c.text), "p.csv", check, sc)
		if err == nil || !strings.HasPrefix(err.Error(), c.want) {
			t.Errorf("%q: error %v, want %q", c.text, err, c.want)
		}
	}
	// without the data, a return row cannot be resolved
	if _, err := ReadPriors(strings.NewReader(h+"return[video],lognormal90,1,2,,\n"), "p.csv", check); err == nil || !strings.HasPrefix(err.Error(), "p.csv:2:1: return[video]: a return prior needs the data") {
		t.Errorf("no data: error %v", err)
	}
}

// TestReadPriorFileNarrowReturn reads a return row from a four-column
// file: the window is all and per 1.
func TestReadPriorFileNarrowReturn(t *testing.T) {
	f, err := ReadPriorFile(strings.NewReader("parameter,family,p1,p2\nreturn[video],lognormal90,0.001,0.004\n"), "p.csv", stageCheck(t), retScaled(60, 1))
	if err != nil {
		t.Fatal(err)
	}
	if len(f.Returns) != 1 || f.Returns[0].Window.Name != "all" || f.Returns[0].Per != 1 || f.Returns[0].Line != 2 {
		t.Errorf("got %+v", f.Returns)
	}
}
