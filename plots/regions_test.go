package plots_test

import (
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"spillway/funnel/fitfolder"
	"spillway/funnel/fitfolder/fitfoldertest"
	"spillway/plots"
)

func loadPanel(t *testing.T, regions int) (*fitfoldertest.Panel, *fitfolder.Fit) {
	t.Helper()
	dir := filepath.Join(t.TempDir(), "fit")
	pn, err := fitfoldertest.WritePanel(dir, fitfoldertest.PanelOptions{Options: fitfoldertest.Options{Draws: 200}, Regions: regions})
	if err != nil {
		t.Fatal(err)
	}
	f, err := fitfolder.Load(dir)
	if err != nil {
		t.Fatal(err)
	}
	return pn, f
}

// TestRegionsChart draws the regions chart of a 6- and a 40-region panel
// and checks what it shows: every region that runs the channel, with the
// region's share and interval from effects_by_region.csv, sorted; the
// pooled share from effects.csv; the region without audio left out and
// named in the caption; a title naming the lowest and the highest region.
func TestRegionsChart(t *testing.T) {
	for _, n := range []int{6, 40} {
		pn, f := loadPanel(t, n)
		if got := plots.NamesOf(f); !slices.Contains(got, "regions") || got[slices.Index(got, "split")+1] != "regions" {
			t.Errorf("%d regions: NamesOf = %v, want regions after split", n, got)
		}
		fig := build(t, f, "all", "regions")
		dark := pn.Regions[n-1]
		for _, ch := range fitfoldertest.Upper {
			pooled := find(t, fig, ch, "pooled")
			e, _ := f.Effect(ch, fitfolder.PathMediatedShare, "all")
			if pooled.Y[0] != e.Mean || pooled.Lo[0] != e.Q05 || pooled.Hi[0] != e.Q95 {
				t.Errorf("%d regions, %s: pooled %v [%v, %v], want effects.csv's %v [%v, %v]", n, ch, pooled.Y[0], pooled.Lo[0], pooled.Hi[0], e.Mean, e.Q05, e.Q95)
			}
			var drawn []plots.Series
			for _, s := range fig.Series {
				if s.Panel == ch && s.Name != "pooled" {
					drawn = append(drawn, s)
				}
			}
			want := n
			if ch == "audio_spend" {
				want-- // the dark region
			}
			if len(drawn) != want {
				t.Fatalf("%d regions, %s: %d regions drawn, want %d", n, ch, len(drawn), want)
			}
			for i, s := range drawn {
				re, ok := f.RegionEffectOf(s.Name, ch, fitfolder.PathMediatedShare, "all")
				if !ok || s.Y[0] != re.Mean || s.Lo[0] != re.Q05 || s.Hi[0] != re.Q95 || s.X[0] != float64(i) {
					t.Errorf("%d regions, %s %s: drew %v [%v, %v] at row %v, want %+v at row %d", n, ch, s.Name, s.Y[0], s.Lo[0], s.Hi[0], s.X[0], re, i)
				}
				if i > 0 && s.Y[0] < drawn[i-1].Y[0] {
					t.Errorf("%d regions, %s: %s (%v) below %s (%v): not sorted", n, ch, s.Name, s.Y[0], drawn[i-1].Name, drawn[i-1].Y[0])
				}
				if ch == "audio_spend" && s.Name == dark {
					t.Errorf("%s never runs audio but is drawn", dark)
				}
			}
			lo, hi := drawn[0], drawn[len(drawn)-1]
			if !strings.Contains(fig.Title, lo.Name) || !strings.Contains(fig.Title, hi.Name) ||
				!strings.Contains(fig.Title, plots.Percent(lo.Y[0])) || !strings.Contains(fig.Title, plots.Percent(hi.Y[0])) {
				t.Errorf("%d regions: title %q does not name %s (%s) and %s (%s)", n, fig.Title, lo.Name, plots.Percent(lo.Y[0]), hi.Name, plots.Percent(hi.Y[0]))
			}
		}
		if !strings.Contains(fig.Caption, "No audio spend in "+dark) {
			t.Errorf("%d regions: caption %q does not say %s has no audio", n, fig.Caption, dark)
		}
		if named := strings.Contains(fig.Caption, "as many as fit"); named != (n > 16) {
			t.Errorf("%d regions: caption says some regions are unnamed: %v", n, named)
		}
		b, err := fig.PNG()
		if err != nil {
			t.Fatal(err)
		}
		checkPNG(t, "regions", b)
	}
}

// TestRegionsChartNational: a national fit has no regions chart.
func TestRegionsChartNational(t *testing.T) {
	_, f := load(t, false)
	if slices.Contains(plots.NamesOf(f), "regions") {
		t.Error("a national fit lists the regions chart")
	}
	if _, err := plots.Chart(f, "all", "regions"); err == nil || !strings.Contains(err.Error(), fitfolder.EffectsByRegionFile) {
		t.Errorf("regions chart of a national fit: got %v, want an error naming %s", err, fitfolder.EffectsByRegionFile)
	}
}
