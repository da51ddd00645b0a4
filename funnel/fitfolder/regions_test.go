package fitfolder_test

import (
	"errors"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"spillway/funnel/fitfolder"
	"spillway/funnel/fitfolder/fitfoldertest"
	"spillway/funnel/stat"
)

func writePanel(t *testing.T, o fitfoldertest.PanelOptions) (*fitfoldertest.Panel, *fitfolder.Fit) {
	t.Helper()
	dir := filepath.Join(t.TempDir(), "fit")
	pn, err := fitfoldertest.WritePanel(dir, o)
	if err != nil {
		t.Fatal(err)
	}
	f, err := fitfolder.Load(dir)
	if err != nil {
		t.Fatal(err)
	}
	return pn, f
}

// TestPanelRoundTrip writes a panel folder and reads it back: the region
// tables hold what was written, every region of the data, and the regions'
// effects add up to the summed effects.csv draw by draw.
func TestPanelRoundTrip(t *testing.T) {
	pn, f := writePanel(t, fitfoldertest.PanelOptions{Options: fitfoldertest.Options{Draws: 200}})
	if !f.HasRegions() || !slices.Equal(f.Regions(), pn.Regions) {
		t.Fatalf("regions: got %v, want %v", f.Regions(), pn.Regions)
	}
	if len(f.Data.Regions) != 6 || f.Run.Spec.Region != fitfoldertest.RegionCol {
		t.Fatalf("data: %d regions, spec region %q", len(f.Data.Regions), f.Run.Spec.Region)
	}
	w := pn.Fit
	for _, c := range []struct {
		name      string
		got, want int
		same      bool
	}{
		{"effects_by_region.csv", len(f.RegionEffects), len(w.RegionEffects), sameEffects(f.RegionEffects, w.RegionEffects)},
		{"borrowed_by_region.csv", len(f.RegionBorrowed), len(w.RegionBorrowed), slices.EqualFunc(f.RegionBorrowed, w.RegionBorrowed,
			func(a, b fitfolder.RegionBorrowed) bool { return a == b })},
		{"region_differences.csv", len(f.RegionDifferences), len(w.RegionDifferences), slices.Equal(f.RegionDifferences, w.RegionDifferences)},
	} {
		if c.got == 0 || c.got != c.want || !c.same {
			t.Errorf("%s: read %d rows, wrote %d, or they differ", c.name, c.got, c.want)
		}
	}
	// 6 regions x 2 upper channels x 4 paths x every window
	if got, want := len(f.RegionEffects), 6*2*4*len(pn.Windows); got != want {
		t.Errorf("effects_by_region.csv: %d rows, want %d", got, want)
	}
	// The regions add up to the sum, draw by draw, so their means add up
	// to effects.csv's mean.
	for _, ch := range fitfoldertest.Upper {
		for _, p := range []string{fitfolder.PathDirect, fitfolder.PathViaSearch, fitfolder.PathTotal} {
			for _, win := range []string{"all", "2024Q3"} {
				k := fitfolder.DrawKey{Channel: ch, Path: p, Window: win}
				total := make([]float64, len(pn.Draws[k]))
				for _, r := range pn.Regions {
					for d, v := range pn.RegionDraws[r][k] {
						total[d] += v
					}
				}
				for d := range total {
					if math.Abs(total[d]-pn.Draws[k][d]) > 1e-9*math.Abs(pn.Draws[k][d]) {
						t.Fatalf("%v draw %d: regions add to %v, the sum is %v", k, d+1, total[d], pn.Draws[k][d])
					}
				}
				sumMeans := 0.0
				for _, r := range pn.Regions {
					e, ok := f.RegionEffectOf(r, ch, p, win)
					if !ok {
						t.Fatalf("no %s row for %s %v", fitfolder.EffectsByRegionFile, r, k)
					}
					sumMeans += e.Mean
				}
				e, _ := f.Effect(ch, p, win)
				if math.Abs(sumMeans-e.Mean) > 1e-9*math.Abs(e.Mean) {
					t.Errorf("%v: region means add to %v, effects.csv has %v", k, sumMeans, e.Mean)
				}
			}
		}
	}
	// The region that never runs audio: its share is undefined (NaN in
	// the file), its per-unit-spend too, and it has no difference row.
	dark := pn.Regions[len(pn.Regions)-1]
	e, ok := f.RegionEffectOf(dark, "audio_spend", fitfolder.PathMediatedShare, "all")
	if !ok || !math.IsNaN(e.Mean) || !math.IsNaN(e.PerUnitSpend) {
		t.Errorf("%s audio share: got %+v, want NaN", dark, e)
	}
	if tot, _ := f.RegionEffectOf(dark, "audio_spend", fitfolder.PathTotal, "all"); tot.Mean != 0 || !math.IsNaN(tot.PerUnitSpend) {
		t.Errorf("%s audio total: got %+v, want 0 and no per-unit value", dark, tot)
	}
	if _, ok := f.RegionDifferenceOf(dark, "audio_spend", fitfolder.MeasureMediatedShare, "all"); ok {
		t.Errorf("%s has a difference row for audio, which it never ran", dark)
	}
	// Region 1 sends video's effect through search far more than the
	// others: its share is clearly above the pooled one.
	d, ok := f.RegionDifferenceOf(pn.Regions[1], "video_spend", fitfolder.MeasureMediatedShare, "all")
	if !ok || d.Mean <= 0.1 || d.PHigher < 0.99 || d.PBeyond < 0.9 {
		t.Errorf("%s video share difference: got %+v, want clearly above the pooled share", pn.Regions[1], d)
	}
	// Its region and pooled means are those of the draws.
	k := fitfolder.DrawKey{Channel: "video_spend", Path: fitfolder.PathViaSearch, Window: "all"}
	kt := fitfolder.DrawKey{Channel: "video_spend", Path: fitfolder.PathTotal, Window: "all"}
	rs, ps := make([]float64, len(pn.Draws[k])), make([]float64, len(pn.Draws[k]))
	for i := range rs {
		rs[i] = pn.RegionDraws[pn.Regions[1]][k][i] / pn.RegionDraws[pn.Regions[1]][kt][i]
		ps[i] = pn.Draws[k][i] / pn.Draws[kt][i]
	}
	if math.Abs(d.RegionMean-stat.Mean(rs)) > 1e-12 || math.Abs(d.PooledMean-stat.Mean(ps)) > 1e-12 {
		t.Errorf("means: got region %v pooled %v, want %v %v", d.RegionMean, d.PooledMean, stat.Mean(rs), stat.Mean(ps))
	}
	// tau parameters are in the summaries.
	out, _ := f.Stage("outcome")
	if !slices.ContainsFunc(out.Params, func(p fitfolder.Param) bool { return p.Name == "tau_gamma" }) {
		t.Error("outcome/summary.csv has no tau_gamma")
	}
}

func sameEffects(a, b []fitfolder.RegionEffect) bool {
	return slices.EqualFunc(a, b, func(x, y fitfolder.RegionEffect) bool {
		return x.Region == y.Region && x.Channel == y.Channel && x.Path == y.Path && x.Window == y.Window &&
			sameOrBothNaN(x.Mean, y.Mean) && sameOrBothNaN(x.Q05, y.Q05) && sameOrBothNaN(x.Q50, y.Q50) &&
			sameOrBothNaN(x.Q95, y.Q95) && sameOrBothNaN(x.PerUnitSpend, y.PerUnitSpend)
	})
}

// TestNationalHasNoRegions: a national folder has no region tables.
func TestNationalHasNoRegions(t *testing.T) {
	_, f := writeFixture(t, fitfoldertest.Options{Draws: 10})
	if f.HasRegions() || f.RegionBorrowed != nil || f.RegionDifferences != nil || len(f.Regions()) != 0 {
		t.Errorf("national fixture has region tables: %d %d %d", len(f.RegionEffects), len(f.RegionBorrowed), len(f.RegionDifferences))
	}
	if _, err := os.Stat(filepath.Join(f.Dir, fitfolder.EffectsByRegionFile)); err == nil {
		t.Error("national fixture wrote effects_by_region.csv")
	}
}

// TestRegionLoadErrors checks that a broken region table gives an error
// naming the file, the line and the column.
func TestRegionLoadErrors(t *testing.T) {
	for _, c := range []struct {
		file, old, new string
		want           []string
	}{
		{"borrowed_by_region.csv", "", "", []string{"borrowed_by_region.csv", ErrMissingText}},
		{"region_differences.csv", "", "", []string{"region_differences.csv", ErrMissingText}},
		{"effects_by_region.csv", "\nAldervale,", "\nAtlantis,", []string{"effects_by_region.csv line 2, column region", `"Atlantis" is not a region`}},
		{"effects_by_region.csv", "\nAldervale,video_spend,direct,all,", "\nAldervale,tv_spend,direct,all,",
			[]string{"effects_by_region.csv line 2, column channel", "tv_spend"}},
		{"effects_by_region.csv", "\nAldervale,video_spend,direct,all,", "\nAldervale,video_spend,sideways,all,",
			[]string{"effects_by_region.csv line 2, column path", "sideways"}},
		{"effects_by_region.csv", "\nAldervale,video_spend,direct,all,", "\nAldervale,video_spend,direct,2031Q9,",
			[]string{"effects_by_region.csv line 2, column window"}},
		{"effects_by_region.csv", "Aldervale,video_spend,direct,all,", "Aldervale,video_spend,direct,all,x",
			[]string{"effects_by_region.csv line 2, column mean", `"x`}},
		{"borrowed_by_region.csv", "\nAldervale,search_spend,controlled", "\nAldervale,video_spend,controlled",
			[]string{"borrowed_by_region.csv line 2, column channel", "not a paid-search channel"}},
		{"region_differences.csv", "\nAldervale,video_spend,mediated_share", "\nAldervale,search_spend,mediated_share",
			[]string{"region_differences.csv line 2, column channel", "not an upper-funnel channel"}},
		{"region_differences.csv", "\nAldervale,video_spend,mediated_share", "\nAldervale,video_spend,share",
			[]string{"region_differences.csv line 2, column measure", `"share"`}},
		{"region_differences.csv", "region,channel", "area,channel", []string{"region_differences.csv line 1, column region", "missing column"}},
	} {
		dir := filepath.Join(t.TempDir(), "fit")
		if _, err := fitfoldertest.WritePanel(dir, fitfoldertest.PanelOptions{Options: fitfoldertest.Options{Draws: 10}, Regions: 3}); err != nil {
			t.Fatal(err)
		}
		path := filepath.Join(dir, c.file)
		if c.old == "" {
			os.Remove(path)
		} else {
			b, err := os.ReadFile(path)
			if err != nil {
				t.Fatal(err)
			}
			if !strings.Contains(string(b), c.old) {
				t.Fatalf("%s has no %q", c.file, c.old)
			}
			os.WriteFile(path, []byte(strings.Replace(string(b), c.old, c.new, 1)), 0o644)
		}
		_, err := fitfolder.Load(dir)
		if err == nil {
			t.Errorf("%s %q: no error", c.file, c.new)
			continue
		}
		for _, w := range c.want {
			if !strings.Contains(err.Error(), w) {
				t.Errorf("%s: error %q does not contain %q", c.file, err, w)
			}
		}
		if c.old == "" && !errors.Is(err, fitfolder.ErrMissing) {
			t.Errorf("%s: error %v does not wrap ErrMissing", c.file, err)
		}
	}
}

// TestRegionDuplicateAndProbability checks the cross-row checks: a
// second row for the same key names the first one's line, and a
// probability outside 0..1 is refused.
func TestRegionDuplicateAndProbability(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "fit")
	if _, err := fitfoldertest.WritePanel(dir, fitfoldertest.PanelOptions{Options: fitfoldertest.Options{Draws: 10}, Regions: 3}); err != nil {
		t.Fatal(err)
	}
	p := filepath.Join(dir, fitfolder.RegionDifferencesFile)
	orig, _ := os.ReadFile(p)
	lines := strings.Split(string(orig), "\n")
	dup := slices.Insert(slices.Clone(lines), 2, lines[1])
	os.WriteFile(p, []byte(strings.Join(dup, "\n")), 0o644)
	if _, err := fitfolder.Load(dir); err == nil || !strings.Contains(err.Error(), "region_differences.csv line 3") ||
		!strings.Contains(err.Error(), "first on line 2") {
		t.Errorf("duplicate row: got %v", err)
	}
	cells := strings.Split(lines[1], ",")
	cells[len(cells)-2] = "1.5" // p_beyond_threshold
	bad := slices.Clone(lines)
	bad[1] = strings.Join(cells, ",")
	os.WriteFile(p, []byte(strings.Join(bad, "\n")), 0o644)
	if _, err := fitfolder.Load(dir); err == nil || !strings.Contains(err.Error(), "region_differences.csv line 2, column p_beyond_threshold") {
		t.Errorf("probability 1.5: got %v", err)
	}
}
