package mediation

import (
	"math"
	"strings"
	"testing"

	"spillway/funnel/model"
	"spillway/funnel/window"
)

// TestSupports checks the support measures on effects whose draws are set
// by hand: contraction from the 90% widths, P(negligible) against the
// channel's total in the same draw and against the outcome, the Bayes
// factor as posterior odds over prior odds, and the notes each case gets.
func TestSupports(t *testing.T) {
	n := 100
	seq := func(lo, hi float64) []float64 { // evenly spread draws
		x := make([]float64, n)
		for i := range x {
			x[i] = lo + (hi-lo)*float64(i)/float64(n-1)
		}
		return x
	}
	add := func(a, b []float64) []float64 {
		x := make([]float64, n)
		for i := range x {
			x[i] = a[i] + b[i]
		}
		return x
	}
	res := func(via, dir, ctl []float64) *Result {
		return &Result{Effects: []Effect{
			{Channel: "v", Path: "via_search", Window: "all", Draws: via},
			{Channel: "v", Path: "direct", Window: "all", Draws: dir},
			{Channel: "v", Path: "total", Window: "all", Draws: add(via, dir)},
		}, Borrowed: []Effect{{Channel: "s", Path: "controlled", Window: "all", Draws: ctl},
			{Channel: "s", Path: "controlled", Window: "2024Q1", Draws: ctl}}}
	}
	// posterior: via 0..10 against a direct of 1000 (negligible), direct
	// 900..1100 (well measured), controlled 0..100000 (as wide as its prior)
	post := res(seq(0, 10), seq(900, 1100), seq(0, 100000))
	// prior: via and direct 0..2000, controlled 0..100000
	prior := res(seq(0, 2000), seq(0, 2000), seq(0, 100000))
	sc := &model.Scaled{Outcome: make([]float64, 10), OutcomeScale: 100000}
	for i := range sc.Outcome {
		sc.Outcome[i] = 1 // outcome in the window: 1,000,000; 5% = 50,000
	}
	wins := []window.Window{{Name: "all", From: 0, To: 9}}
	sup := Supports(post, prior, sc, wins, 0.05)
	via := sup[Key{"v", "via_search", "all"}]
	if via.PNegligible != 1 {
		t.Errorf("via: P(negligible) %v, want 1", via.PNegligible)
	}
	if w := 1 - 9.0/1800; math.Abs(via.Contraction-w) > 1e-9 {
		t.Errorf("via: contraction %v, want %v", via.Contraction, w)
	}
	dir := sup[Key{"v", "direct", "all"}]
	if dir.PNegligible != 0 {
		t.Errorf("direct: P(negligible) %v, Bayes factor %v, want 0 and small", dir.PNegligible, dir.BayesFactor(n, n))
	}
	ctl := sup[Key{"s", "controlled", "all"}]
	if ctl.PNegligible != 0.5 || ctl.PriorPNegligible != 0.5 || math.Abs(ctl.BayesFactor(n, n)-1) > 1e-12 || math.Abs(ctl.Contraction) > 1e-12 {
		t.Errorf("controlled: %+v", ctl)
	}
	notes := strings.Join(SupportNotes(post, sup, "all", 0.05), "\n")
	for _, want := range []string{"v's via-search path (all): negligible (P = 1.00", "s's controlled return (all): not distinguishable from zero"} {
		if !strings.Contains(notes, want) {
			t.Errorf("notes lack %q:\n%s", want, notes)
		}
	}
	if strings.Contains(notes, "2024Q1") {
		t.Errorf("notes for window all name another window:\n%s", notes)
	}
	if strings.Contains(notes, "direct path") {
		t.Errorf("a well-measured direct path got a note:\n%s", notes)
	}
}
