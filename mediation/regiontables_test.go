package mediation

import (
	"fmt"
	"math"
	"slices"
	"testing"

	"spillway/funnel/fitfolder"
	"spillway/funnel/model"
	"spillway/funnel/window"
)

// upperResult is a Result of one upper channel over one window with the
// given per-draw via-search and direct effects and spend.
func upperResult(channel, window string, via, direct []float64, spend float64) *Result {
	n := len(via)
	tot, share := make([]float64, n), make([]float64, n)
	for d := range tot {
		tot[d] = via[d] + direct[d]
		share[d] = via[d] / tot[d]
	}
	r := &Result{}
	for _, e := range []struct {
		path string
		x    []float64
	}{{"direct", direct}, {"via_search", via}, {"total", tot}, {"mediated_share", share}} {
		r.Effects = append(r.Effects, Effect{Channel: channel, Path: e.path, Window: window, Draws: e.x, Spend: spend})
	}
	return r
}

// sumResults adds results draw by draw, as the sum over regions does.
func sumResults(rs ...*Result) *Result {
	out := &Result{}
	for i, e := range rs[0].Effects {
		s := Effect{Channel: e.Channel, Path: e.Path, Window: e.Window, Draws: make([]float64, len(e.Draws))}
		for _, r := range rs {
			s.Spend += r.Effects[i].Spend
			for d, v := range r.Effects[i].Draws {
				s.Draws[d] += v
			}
		}
		out.Effects = append(out.Effects, s)
	}
	// the share of the sum is the summed via over the summed total, per
	// channel and window
	type key struct{ ch, win string }
	via, tot := map[key][]float64{}, map[key][]float64{}
	for _, e := range out.Effects {
		switch e.Path {
		case "via_search":
			via[key{e.Channel, e.Window}] = e.Draws
		case "total":
			tot[key{e.Channel, e.Window}] = e.Draws
		}
	}
	for i, e := range out.Effects {
		if e.Path == "mediated_share" {
			k := key{e.Channel, e.Window}
			for d := range e.Draws {
				out.Effects[i].Draws[d] = via[k][d] / tot[k][d]
			}
		}
	}
	return out
}

func TestRegionTablesPerRegion(t *testing.T) {
	north := upperResult("video", "all", []float64{60, 70, 80, 90}, []float64{40, 30, 20, 10}, 1000)
	south := upperResult("video", "all", []float64{10, 20, 30, 40}, []float64{90, 80, 70, 60}, 500)
	rows := RegionEffectsTable([]string{"north", "south"}, []*Result{north, south})
	if len(rows) != 8 {
		t.Fatalf("got %d rows, want 8 (4 paths x 2 regions)", len(rows))
	}
	// the rows are EffectsTable's of each region, with the region first
	for g, r := range []*Result{north, south} {
		for i, e := range EffectsTable(r, nil) {
			got := rows[4*g+i]
			if got.Region != []string{"north", "south"}[g] || got.Channel != e.Channel || got.Path != e.Path ||
				got.Mean != e.Mean || got.Q05 != e.Q05 || got.Q95 != e.Q95 || !sameFloat(got.PerUnitSpend, e.PerUnitSpend) {
				t.Errorf("row %d: got %+v, want %+v", 4*g+i, got, e)
			}
		}
	}
	// north's total is 100 in every draw over a spend of 1000
	if got := rows[2]; got.Path != "total" || got.Mean != 100 || got.PerUnitSpend != 0.1 {
		t.Errorf("north total: got %+v, want mean 100, per unit 0.1", got)
	}
}

func sameFloat(a, b float64) bool { return a == b || math.IsNaN(a) && math.IsNaN(b) }

// TestRegionDifferences checks the per-draw differences against values
// worked by hand.
func TestRegionDifferences(t *testing.T) {
	// north: share 0.6, 0.7, 0.8, 0.9 (total 100); south: share 0.1..0.4
	// (total 100); sum: via 70, 90, 110, 130 over totals 200, so pooled
	// share 0.35, 0.45, 0.55, 0.65 and north - pooled = 0.25 in every draw,
	// south - pooled = -0.25.
	north := upperResult("video", "all", []float64{60, 70, 80, 90}, []float64{40, 30, 20, 10}, 1000)
	south := upperResult("video", "all", []float64{10, 20, 30, 40}, []float64{90, 80, 70, 60}, 500)
	// east runs no video: no row
	east := upperResult("video", "all", []float64{0, 0, 0, 0}, []float64{0, 0, 0, 0}, 0)
	pooled := sumResults(north, south, east)
	rows, err := RegionDifferences([]string{"north", "south", "east"}, []*Result{north, south, east}, pooled)
	if err != nil {
		t.Fatal(err)
	}
	if len(rows) != 4 {
		t.Fatalf("got %d rows, want 4 (share and return for north and south, none for east): %+v", len(rows), rows)
	}
	near := func(a, b float64) bool { return math.Abs(a-b) < 1e-12 }
	n, ok := find(rows, "north", fitfolder.MeasureMediatedShare)
	if !ok || !near(n.Mean, 0.25) || !near(n.Q05, 0.25) || !near(n.Q95, 0.25) || n.PBeyond != 1 || n.PHigher != 1 ||
		!near(n.RegionMean, 0.75) || !near(n.PooledMean, 0.5) || n.Threshold != ShareThreshold {
		t.Errorf("north share: got %+v", n)
	}
	s, ok := find(rows, "south", fitfolder.MeasureMediatedShare)
	if !ok || !near(s.Mean, -0.25) || s.PBeyond != 1 || s.PHigher != 0 {
		t.Errorf("south share: got %+v", s)
	}
	// returns: north 100/1000 = 0.1, south 100/500 = 0.2, pooled 200/1500;
	// threshold 0.2 x 2/15; north - pooled = -1/30 (beyond 0.02667), south
	// + 1/15.
	nr, ok := find(rows, "north", fitfolder.MeasureReturnOnSpend)
	if !ok || !near(nr.Mean, 0.1-200.0/1500) || !near(nr.Threshold, 0.2*200/1500) || nr.PBeyond != 1 || nr.PHigher != 0 {
		t.Errorf("north return: got %+v", nr)
	}
	sr, ok := find(rows, "south", fitfolder.MeasureReturnOnSpend)
	if !ok || !near(sr.Mean, 0.2-200.0/1500) || sr.PHigher != 1 {
		t.Errorf("south return: got %+v", sr)
	}
}

// TestRegionDifferencesProbabilities checks the probabilities on draws
// where the difference is beyond the threshold in some draws only: region
// shares 0.5, 0.52, 0.7, 0.3 against a pooled 0.5 in every draw: the
// differences 0, 0.02, 0.2, -0.2 exceed 0.10 in two draws of four and are
// positive in two.
func TestRegionDifferencesProbabilities(t *testing.T) {
	a := upperResult("audio", "2025Q1", []float64{50, 52, 70, 30}, []float64{50, 48, 30, 70}, 10)
	pooled := upperResult("audio", "2025Q1", []float64{50, 50, 50, 50}, []float64{50, 50, 50, 50}, 20)
	rows, err := RegionDifferences([]string{"a"}, []*Result{a}, pooled)
	if err != nil {
		t.Fatal(err)
	}
	r, ok := find(rows, "a", fitfolder.MeasureMediatedShare)
	if !ok || r.PBeyond != 0.5 || r.PHigher != 0.5 || math.Abs(r.Mean-0.005) > 1e-12 || r.Window != "2025Q1" || r.Channel != "audio" {
		t.Errorf("got %+v, want P(beyond) 0.5, P(higher) 0.5, mean 0.005", r)
	}
}

func TestRegionDifferencesDrawMismatch(t *testing.T) {
	a := upperResult("video", "all", []float64{1, 2}, []float64{1, 2}, 10)
	pooled := upperResult("video", "all", []float64{1, 2, 3}, []float64{1, 2, 3}, 10)
	if _, err := RegionDifferences([]string{"a"}, []*Result{a}, pooled); err == nil {
		t.Fatal("no error for regions with fewer draws than the pooled result")
	}
}

func find(rows []fitfolder.RegionDifference, region, measure string) (fitfolder.RegionDifference, bool) {
	for _, r := range rows {
		if r.Region == region && r.Measure == measure {
			return r, true
		}
	}
	return fitfolder.RegionDifference{}, false
}

// BenchmarkRegionTables builds the region tables of 40 regions, two upper
// channels, five windows and 4,000 draws: what a panel's split adds to the
// national one.
func BenchmarkRegionTables(b *testing.B) {
	const regions, draws = 40, 4000
	windows := []string{"all", "2025Q1", "2025Q2", "2025Q3", "2025Q4"}
	names := make([]string, regions)
	results := make([]*Result, regions)
	for g := range results {
		names[g] = fmt.Sprintf("region%02d", g)
		r := &Result{}
		for _, ch := range []string{"video", "audio"} {
			for w, wn := range windows {
				via, dir := make([]float64, draws), make([]float64, draws)
				for d := range via {
					via[d] = 50 + float64((d*7+g*13+w)%31)
					dir[d] = 40 + float64((d*11+g*5+w)%29)
				}
				r.Effects = append(r.Effects, upperResult(ch, wn, via, dir, 1000+float64(g)).Effects...)
			}
		}
		results[g] = r
	}
	pooled := sumResults(results...)
	b.ReportAllocs()
	b.ResetTimer()
	for range b.N {
		_ = RegionEffectsTable(names, results)
		if _, err := RegionDifferences(names, results, pooled); err != nil {
			b.Fatal(err)
		}
	}
}

// TestRegionTablesOfSplit runs the split on two synthetic regions (three
// paired draws each) and checks the region tables against the split's own
// effects: one effects_by_region row per region and effects row, and
// differences that are, draw by draw, the region's via/total minus the
// summed via over the summed total.
func TestRegionTablesOfSplit(t *testing.T) {
	var results []*Result
	for _, seed := range []uint64{1, 2} {
		sc, st1, st2, _, _ := synth(t, 104, seed, model.Options{})
		var r1, r2 [][]float64
		for d := range 3 {
			_, _, _, v1, v2 := synth(t, 104, 10*seed+uint64(d), model.Options{})
			r1, r2 = append(r1, v1), append(r2, v2)
		}
		in := &Inputs{Data: sc, Demand: st1, Outcome: st2,
			DemandDraws: Draws{Names: st1.Names(), Rows: r1}, OutcomeDraws: Draws{Names: st2.Names(), Rows: r2}}
		res, err := Split(in, window.Quarters(sc.Weeks))
		if err != nil {
			t.Fatal(err)
		}
		results = append(results, res)
	}
	names := []string{"east", "west"}
	rows := RegionEffectsTable(names, results)
	if want := len(results[0].Effects) + len(results[1].Effects); len(rows) != want {
		t.Fatalf("effects_by_region: %d rows, want %d", len(rows), want)
	}
	if b := RegionBorrowedTable(names, results); len(b) != len(results[0].Borrowed)+len(results[1].Borrowed) || b[0].Region != "east" {
		t.Fatalf("borrowed_by_region: %d rows", len(b))
	}
	pooled := sumResults(results...)
	diffs, err := RegionDifferences(names, results, pooled)
	if err != nil {
		t.Fatal(err)
	}
	get := func(r *Result, ch, path, win string) Effect {
		for _, e := range r.Effects {
			if e.Channel == ch && e.Path == path && e.Window == win {
				return e
			}
		}
		t.Fatalf("no %s %s %s", ch, path, win)
		return Effect{}
	}
	checked := 0
	for _, d := range diffs {
		if d.Measure != fitfolder.MeasureMediatedShare {
			continue
		}
		g := slices.Index(names, d.Region)
		var want []float64
		for i := range 3 {
			rv, rt := get(results[g], d.Channel, "via_search", d.Window).Draws[i], get(results[g], d.Channel, "total", d.Window).Draws[i]
			sv := get(results[0], d.Channel, "via_search", d.Window).Draws[i] + get(results[1], d.Channel, "via_search", d.Window).Draws[i]
			st := get(results[0], d.Channel, "total", d.Window).Draws[i] + get(results[1], d.Channel, "total", d.Window).Draws[i]
			want = append(want, rv/rt-sv/st)
		}
		if m := (want[0] + want[1] + want[2]) / 3; math.Abs(d.Mean-m) > 1e-12 {
			t.Errorf("%s %s %s: difference mean %v, want %v", d.Region, d.Channel, d.Window, d.Mean, m)
		}
		checked++
	}
	if checked < 2*2*4 {
		t.Errorf("only %d share differences checked", checked)
	}
}
