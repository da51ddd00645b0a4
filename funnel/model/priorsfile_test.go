package model

import (
	"math"
	"strings"
	"testing"
)

func TestReadPriors(t *testing.T) {
	known := func(n string) bool { return n == "K[video]" || n == "gamma" || n == "sigma_q" }
	good := "parameter,family,p1,p2\r\nK[video],gamma,2,4\ngamma, HalfNormal ,0.3,\nsigma_q,jeffreys,,\n"
	p, err := ReadPriors(strings.NewReader(good), "p.csv", known)
	if err != nil {
		t.Fatal(err)
	}
	if p["K[video]"] != (Prior{Gamma, 2, 4}) || p["gamma"] != (Prior{HalfNormal, 0.3, 0}) || p["sigma_q"].Family != Jeffreys {
		t.Errorf("got %v", p)
	}
	for _, c := range []struct{ text, want string }{
		{"", "p.csv:1: empty file"},
		{"parameter,family,p1\n", "p.csv:1: header has 3 columns"},
		{"parameter,kind,p1,p2\n", "p.csv:1:2: header column 2"},
		{"parameter,family,p1,p2\nalpha[x],normal,0,1\n", "p.csv:2:1: no parameter named \"alpha[x]\""},
		{"parameter,family,p1,p2\ngamma,normal,0,1\ngamma,normal,0,2\n", "p.csv:3:1: parameter gamma already has a prior on line 2"},
		{"parameter,family,p1,p2\ngamma,cauchy,0,1\n", "p.csv:2:2: gamma: unknown family \"cauchy\""},
		{"parameter,family,p1,p2\ngamma,normal,zero,1\n", "p.csv:2:3: p1 \"zero\" is not a number"},
		{"parameter,family,p1,p2\ngamma,normal,0,-1\n", "p.csv:2:2: gamma: normal needs p1 = mean and p2 = sd > 0"},
		{"parameter,family,p1,p2\ngamma,normal,0\n", "p.csv:2: row has 3 fields"},
	} {
		_, err := ReadPriors(strings.NewReader(c.text), "p.csv", known)
		if err == nil || !strings.HasPrefix(err.Error(), c.want) {
			t.Errorf("%q: got %v, want prefix %q", c.text, err, c.want)
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
