package mediation

import (
	"math"
	"testing"
)

// TestSumRegions checks the sum over regions on two regions of two draws:
// effects and spend add draw by draw, the shares are ratios of the sums
// (not sums of ratios), weekly contributions add.
func TestSumRegions(t *testing.T) {
	region := func(via, dir, ctl, app []float64, spend float64) *Result {
		n := len(via)
		tot, share, bshare := make([]float64, n), make([]float64, n), make([]float64, n)
		for d := range tot {
			tot[d] = via[d] + dir[d]
			share[d] = via[d] / tot[d]
			bshare[d] = BorrowedShare(app[d], ctl[d])
		}
		return &Result{
			Effects: []Effect{
				{Channel: "video", Path: "direct", Window: "all", Draws: dir, Spend: spend},
				{Channel: "video", Path: "via_search", Window: "all", Draws: via, Spend: spend},
				{Channel: "video", Path: "total", Window: "all", Draws: tot, Spend: spend},
				{Channel: "video", Path: "mediated_share", Window: "all", Draws: share, Spend: spend},
			},
			Borrowed: []Effect{
				{Channel: "search", Path: "controlled", Window: "all", Draws: ctl, Spend: 1},
				{Channel: "search", Path: "apparent", Window: "all", Draws: app, Spend: 1},
				{Channel: "search", Path: "borrowed_share", Window: "all", Draws: bshare, Spend: 1},
			},
			Weekly: [][2][][]float64{{{{1, 2}, {3, 4}}, {{5, 6}, {7, 8}}}},
		}
	}
	// draw 3: the summed apparent return (0.0005) lies below the summed
	// controlled one (6) and near zero, where (apparent - controlled) /
	// apparent would be -11999; the share is BorrowedShare's, as nationally
	a := region([]float64{10, 20, 1}, []float64{30, 20, 1}, []float64{5, 6, 5}, []float64{10, 9, 0.001}, 100)
	b := region([]float64{1, 0, 1}, []float64{1, 2, 1}, []float64{1, 2, 1}, []float64{2, 2, -0.0005}, 50)
	res, err := SumRegions([]RegionResult{{"A", a}, {"B", b}})
	if err != nil {
		t.Fatal(err)
	}
	want := map[string][]float64{
		"direct": {31, 22}, "via_search": {11, 20}, "total": {42, 42}, "mediated_share": {11.0 / 42, 20.0 / 42},
		"controlled": {6, 8, 6}, "apparent": {12, 11, 0.0005}, "borrowed_share": {0.5, 3.0 / 11, (0.0005 - 6) / 6},
	}
	for _, e := range append(res.Total.Effects, res.Total.Borrowed...) {
		for d, w := range want[e.Path] {
			if math.Abs(e.Draws[d]-w) > 1e-12 {
				t.Errorf("%s draw %d: got %v, want %v", e.Path, d, e.Draws[d], w)
			}
		}
	}
	if s := res.Total.Effects[0].Spend; s != 150 {
		t.Errorf("spend %v, want 150", s)
	}
	if w := res.Total.Weekly[0][1][1][0]; w != 14 {
		t.Errorf("weekly direct, draw 2, week 1: %v, want 14", w)
	}
	if len(res.Regions) != 2 || res.Regions[1].Region != "B" {
		t.Errorf("regions %v", res.Regions)
	}
}
