package mediation

import (
	"strings"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"

	"spillway/funnel/fitfolder"
	"spillway/funnel/model"
	"spillway/funnel/window"
)

// TestBorrowedByQuarter: with paid search linear (no carryover, no
// saturation) its controlled and apparent effects are linear in its spend,
// so the quarters' effects add up to the whole period's; the borrowed share
// is a ratio of coefficients, the same in every window.
func TestBorrowedByQuarter(t *testing.T) {
	sc, st1, st2, v1, v2 := synth(t, 120, 3, model.Options{Linear: map[string]bool{"search": true}})
	in := &Inputs{Data: sc, Demand: st1, Outcome: st2,
		DemandDraws: Draws{Names: st1.Names(), Rows: [][]float64{v1}}, OutcomeDraws: Draws{Names: st2.Names(), Rows: [][]float64{v2}}}
	wins := window.Quarters(sc.Weeks)
	res, err := Split(in, wins)
	if err != nil {
		t.Fatal(err)
	}
	val := map[string]float64{}
	for _, e := range res.Borrowed {
		val[e.Path+"/"+e.Window] = e.Draws[0]
	}
	for _, m := range []string{"controlled", "apparent"} {
		sum := 0.0
		for _, w := range wins[1:] {
			sum += val[m+"/"+w.Name]
		}
		if whole := val[m+"/all"]; !scalar.EqualWithinAbsOrRel(sum, whole, 1e-9, 1e-9) || whole == 0 {
			t.Errorf("%s: quarters add up to %v, whole period %v", m, sum, whole)
		}
	}
	for _, w := range wins {
		if got, want := val["borrowed_share/"+w.Name], val["borrowed_share/all"]; got != want {
			t.Errorf("borrowed share in %s: %v, whole period %v", w.Name, got, want)
		}
	}
}

// TestNaiveCheck: agreement means each mean inside the other's 90%
// interval; a disagreement yields one note naming the channel and which
// figure to use.
func TestNaiveCheck(t *testing.T) {
	row := func(m string, mean, lo, hi float64) fitfolder.Borrowed {
		return fitfolder.Borrowed{Channel: "search", Measure: m, Window: "all", Mean: mean, Q05: lo, Q95: hi}
	}
	agree := []fitfolder.Borrowed{row("apparent", 77487, 21276, 166595), row("naive", 65749, 17679, 150623)}
	if n := NaiveCheck(agree); len(n) != 0 {
		t.Errorf("agreeing figures gave notes %q", n)
	}
	// the bare least-squares identity on a user's data set against its refit
	apart := []fitfolder.Borrowed{row("apparent", 510187, 400000, 600000), row("naive", 87956, 22991, 189779)}
	n := NaiveCheck(apart)
	if len(n) != 1 || !strings.Contains(n[0], "for search the apparent return (510187 [400000, 600000]) and the refit without queries (87956 [22991, 189779]) disagree") ||
		!strings.Contains(n[0], "Use the apparent return") {
		t.Errorf("disagreeing figures gave %q", n)
	}
}
