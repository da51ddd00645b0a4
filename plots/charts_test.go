package plots_test

import (
	"bytes"
	"errors"
	"fmt"
	"image"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"sync"
	"testing"

	"spillway/funnel/fitfolder"
	"spillway/funnel/fitfolder/fitfoldertest"
	"spillway/funnel/stat"
	"spillway/funnel/window"
	"spillway/mediation"
	"spillway/plots"
)

type fixture struct {
	fx *fitfoldertest.Fixture
	f  *fitfolder.Fit
}

var (
	fixtures   = map[bool]*fixture{}
	fixturesMu sync.Mutex
)

// load returns the trustworthy (bad=false) or untrustworthy fixture, built
// once per test binary.
func load(t *testing.T, bad bool) (*fitfoldertest.Fixture, *fitfolder.Fit) {
	t.Helper()
	fixturesMu.Lock()
	defer fixturesMu.Unlock()
	if x, ok := fixtures[bad]; ok {
		return x.fx, x.f
	}
	dir, err := os.MkdirTemp("", "spillway-plots-")
	if err != nil {
		t.Fatal(err)
	}
	tmpDirs = append(tmpDirs, dir)
	fx, err := fitfoldertest.Write(filepath.Join(dir, "fit"), fitfoldertest.Options{Untrustworthy: bad})
	if err != nil {
		t.Fatal(err)
	}
	f, err := fitfolder.Load(fx.Dir)
	if err != nil {
		t.Fatal(err)
	}
	fixtures[bad] = &fixture{fx, f}
	return fx, f
}

var tmpDirs []string

func TestMain(m *testing.M) {
	code := m.Run()
	for _, d := range tmpDirs {
		os.RemoveAll(d)
	}
	os.Exit(code)
}

// TestPNGs writes every chart with WriteCharts and checks that each file
// is a 1600×900 PNG that is not blank, that nothing but the PNGs is left
// in the folder, and that rendering again gives the same bytes.
func TestPNGs(t *testing.T) {
	_, f := load(t, false)
	out := filepath.Join(t.TempDir(), "charts")
	paths, err := plots.WriteCharts(f, "", out)
	if err != nil {
		t.Fatal(err)
	}
	if len(paths) != len(plots.Names) {
		t.Fatalf("wrote %d files, want %d", len(paths), len(plots.Names))
	}
	entries, _ := os.ReadDir(out)
	if len(entries) != len(plots.Names) {
		var names []string
		for _, e := range entries {
			names = append(names, e.Name())
		}
		t.Errorf("charts folder holds %v, want only the %d PNGs", names, len(plots.Names))
	}
	for i, name := range plots.Names {
		if filepath.Base(paths[i]) != name+".png" {
			t.Errorf("path %d: got %s, want %s.png", i, paths[i], name)
		}
		b, err := os.ReadFile(paths[i])
		if err != nil {
			t.Fatal(err)
		}
		checkPNG(t, name, b)
	}
	// Determinism: the same inputs give byte-identical PNGs.
	fig := build(t, f, "", "weekly")
	again, err := fig.PNG()
	if err != nil {
		t.Fatal(err)
	}
	if first, _ := os.ReadFile(filepath.Join(out, "weekly.png")); !bytes.Equal(first, again) {
		t.Error("weekly.png: two renderings differ")
	}
	// The charts of an untrustworthy fit render too (with the warning line).
	_, bad := load(t, true)
	for _, name := range []string{"split", "diagnostics"} {
		b, err := build(t, bad, "", name).PNG()
		if err != nil {
			t.Fatal(err)
		}
		checkPNG(t, name+" (untrustworthy)", b)
	}
}

func checkPNG(t *testing.T, name string, b []byte) {
	t.Helper()
	img, err := png.Decode(bytes.NewReader(b))
	if err != nil {
		t.Fatalf("%s: %v", name, err)
	}
	if sz := img.Bounds().Size(); sz.X != plots.WidthPx || sz.Y != plots.HeightPx {
		t.Errorf("%s: size %v, want %dx%d", name, sz, plots.WidthPx, plots.HeightPx)
	}
	// Not blank: the luminance varies, and a fair share of the page is
	// ink or colour (titles, bars, lines).
	sd, inked := pixelSpread(img)
	if sd < 20 || inked < 0.02 {
		t.Errorf("%s: looks blank (luminance sd %.1f, %.1f%% non-white)", name, sd, 100*inked)
	}
}

// pixelSpread returns the standard deviation of luminance (0..255) and the
// fraction of pixels that are not near-white.
func pixelSpread(img image.Image) (sd, inked float64) {
	b := img.Bounds()
	var s, s2, n, dark float64
	for y := b.Min.Y; y < b.Max.Y; y += 3 {
		for x := b.Min.X; x < b.Max.X; x += 3 {
			r, g, bl, _ := img.At(x, y).RGBA()
			l := (0.2126*float64(r) + 0.7152*float64(g) + 0.0722*float64(bl)) / 257
			s += l
			s2 += l * l
			n++
			if l < 240 {
				dark++
			}
		}
	}
	m := s / n
	return math.Sqrt(s2/n - m*m), dark / n
}

func build(t *testing.T, f *fitfolder.Fit, window, name string) *plots.Figure {
	t.Helper()
	fig, err := plots.Chart(f, window, name)
	if err != nil {
		t.Fatal(err)
	}
	return fig
}

func find(t *testing.T, fig *plots.Figure, panel, name string) plots.Series {
	t.Helper()
	s, ok := fig.Find(panel, name)
	if !ok {
		t.Fatalf("%s: no series %s/%s", fig.Name, panel, name)
	}
	return s
}

func fxEffect(t *testing.T, fx *fitfoldertest.Fixture, ch, path, w string) fitfolder.Effect {
	t.Helper()
	for _, e := range fx.Effects {
		if e.Channel == ch && e.Path == path && e.Window == w {
			return e
		}
	}
	t.Fatalf("fixture has no effect %s %s %s", ch, path, w)
	return fitfolder.Effect{}
}

// TestSplitNumbers checks that the split chart draws the window's and the
// whole period's effects of each upper channel as written in effects.csv.
func TestSplitNumbers(t *testing.T) {
	fx, f := load(t, false)
	fig := build(t, f, "", "split")
	for _, w := range []string{"2025Q3", "all"} {
		for _, ch := range fitfoldertest.Upper {
			for _, path := range []string{"direct", "via_search", "total", "mediated_share"} {
				s := find(t, fig, w, ch+"/"+path)
				e := fxEffect(t, fx, ch, path, w)
				if s.Y[0] != e.Mean || s.Lo[0] != e.Q05 || s.Hi[0] != e.Q95 {
					t.Errorf("%s %s %s: drew (%v, %v, %v), want (%v, %v, %v)", w, ch, path, s.Y[0], s.Lo[0], s.Hi[0], e.Mean, e.Q05, e.Q95)
				}
			}
		}
	}
	for _, ch := range fitfoldertest.Upper {
		share := fxEffect(t, fx, ch, "mediated_share", "2025Q3").Mean
		want := plots.Percent(share) + " of " + plots.Channel(ch) + "'s"
		if !strings.Contains(fig.Title, want) || !strings.HasPrefix(fig.Title, "In 2025Q3") {
			t.Errorf("title %q does not contain %q", fig.Title, want)
		}
	}
	// With --window all there is a single panel.
	one := build(t, f, "all", "split")
	for _, s := range one.Series {
		if s.Panel != "all" {
			t.Fatalf("window all: unexpected panel %s", s.Panel)
		}
	}
	// A custom window from effects.csv works too.
	cust := build(t, f, fitfoldertest.CustomWindow, "split")
	s := find(t, cust, fitfoldertest.CustomWindow, "video_spend/total")
	if e := fxEffect(t, fx, "video_spend", "total", fitfoldertest.CustomWindow); s.Y[0] != e.Mean {
		t.Errorf("custom window total: got %v, want %v", s.Y[0], e.Mean)
	}
}

func TestUnknownWindow(t *testing.T) {
	_, f := load(t, false)
	_, err := plots.Build(f, "2019Q1")
	var we *fitfolder.WindowError
	if !errors.As(err, &we) || !slices.Contains(we.Available, "2025Q3") {
		t.Fatalf("got %v, want a WindowError listing the windows", err)
	}
	if _, err := plots.WriteCharts(f, "2019Q1", filepath.Join(t.TempDir(), "charts")); !errors.As(err, &we) {
		t.Fatalf("WriteCharts: got %v, want a WindowError", err)
	}
}

func TestBorrowedNumbers(t *testing.T) {
	fx, f := load(t, false)
	fig := build(t, f, "", "borrowed")
	for _, b := range fx.Borrowed {
		s := find(t, fig, b.Channel, b.Measure)
		if s.Y[0] != b.Mean || s.Lo[0] != b.Q05 || s.Hi[0] != b.Q95 {
			t.Errorf("%s: drew (%v, %v, %v), want (%v, %v, %v)", b.Measure, s.Y[0], s.Lo[0], s.Hi[0], b.Mean, b.Q05, b.Q95)
		}
		if b.Measure == "borrowed_share" && !strings.HasPrefix(fig.Title, plots.Percent(b.Mean)+" of paid search") {
			t.Errorf("title %q does not start with the borrowed share %s", fig.Title, plots.Percent(b.Mean))
		}
	}
}

func TestCurveNumbers(t *testing.T) {
	fx, f := load(t, false)
	fig := build(t, f, "", "curves")
	for _, ch := range fitfoldertest.Upper {
		for _, path := range []string{"direct", "via_search", "total"} {
			s := find(t, fig, ch, path)
			var want []fitfolder.Curve
			for _, c := range fx.Curves {
				if c.Channel == ch && c.Path == path {
					want = append(want, c)
				}
			}
			if len(s.X) != len(want) {
				t.Fatalf("%s %s: %d points, want %d", ch, path, len(s.X), len(want))
			}
			for i, c := range want {
				if s.X[i] != c.WeeklySpend || s.Y[i] != c.Mean || s.Lo[i] != c.Q05 || s.Hi[i] != c.Q95 {
					t.Fatalf("%s %s point %d: got (%v, %v), want (%v, %v)", ch, path, i, s.X[i], s.Y[i], c.WeeklySpend, c.Mean)
				}
			}
		}
		curS := find(t, fig, ch, "current")
		cur := curS.X[0]
		if want := stat.Mean(fx.Columns[ch]); math.Abs(cur-want) > 1e-9*want {
			t.Errorf("%s current spend: got %v, want mean weekly spend %v", ch, cur, want)
		}
		// The operating point: the total curve and its interval at the
		// current spend, which is a grid point of the fixture's curves.
		for _, c := range fx.Curves {
			if c.Channel == ch && c.Path == "total" && math.Abs(c.WeeklySpend-cur) < 1e-9*cur {
				if math.Abs(curS.Y[0]-c.Mean) > 1e-9*c.Mean || math.Abs(curS.Lo[0]-c.Q05) > 1e-9*c.Mean || math.Abs(curS.Hi[0]-c.Q95) > 1e-9*c.Mean {
					t.Errorf("%s operating point: got %v [%v, %v], want %v [%v, %v]", ch, curS.Y[0], curS.Lo[0], curS.Hi[0], c.Mean, c.Q05, c.Q95)
				}
			}
		}
		// The observed range: the least and greatest week with spend.
		lo, hi := math.Inf(1), math.Inf(-1)
		for _, v := range fx.Columns[ch] {
			if v > 0 {
				lo, hi = math.Min(lo, v), math.Max(hi, v)
			}
		}
		if obs := find(t, fig, ch, "observed"); math.Abs(obs.X[0]-lo) > 1e-6*hi || math.Abs(obs.X[1]-hi) > 1e-6*hi {
			t.Errorf("%s observed range: got %v, want [%v, %v]", ch, obs.X, lo, hi)
		}
		// The fixture's curves are closed-form saturating curves on a grid
		// with a point at 1.0× and 1.1× current spend, so the gain from 10%
		// more spend is exact: total(1.1c) − total(c).
		dmax := map[string]float64{"video_spend": 90, "audio_spend": 110}[ch]
		vmax := map[string]float64{"video_spend": 140, "audio_spend": 70}[ch]
		tot := func(s float64) float64 { return dmax*s/(s+1.2*cur) + vmax*s/(s+0.9*cur) }
		g, _, ok := plots.MarginalGain(f, ch)
		if want := tot(1.1*cur) - tot(cur); !ok || math.Abs(g-want) > 1e-9 {
			t.Errorf("%s marginal gain: got %v, want %v (closed form)", ch, g, want)
		}
		if !strings.Contains(fig.Title, plots.About(g)) {
			t.Errorf("title %q lacks %s", fig.Title, plots.About(g))
		}
	}
}

func TestWeeklyNumbers(t *testing.T) {
	fx, f := load(t, false)
	fig := build(t, f, "", "weekly")
	w, _ := window.Parse("2025Q3")
	for _, ch := range fitfoldertest.Upper {
		s := find(t, fig, ch, "via_search")
		var rows []fitfolder.Weekly
		for _, r := range fx.Weekly {
			if r.Channel == ch && r.Path == "via_search" {
				rows = append(rows, r)
			}
		}
		if len(s.Y) != len(rows) || len(rows) != 156 {
			t.Fatalf("%s: %d weeks drawn, want %d", ch, len(s.Y), len(rows))
		}
		sum, n := 0.0, 0
		for i, r := range rows {
			if s.Y[i] != r.Mean || s.Lo[i] != r.Q05 || s.Hi[i] != r.Q95 {
				t.Fatalf("%s week %d: got %v, want %v", ch, i, s.Y[i], r.Mean)
			}
			if w.Contains(r.Week) {
				sum += r.Mean
				n++
			}
		}
		if n != 13 {
			t.Errorf("2025Q3 has %d weeks, want 13 (7 Jul .. 29 Sep 2025)", n)
		}
		if want := plots.About(sum / float64(n)); !strings.Contains(fig.Title, want+" ") {
			t.Errorf("title %q lacks the 2025Q3 weekly mean %s", fig.Title, want)
		}
	}
	if _, ok := fig.Find("search_spend", "direct"); !ok {
		t.Error("weekly chart has no panel for paid search")
	}
	// The caption names the split chart's definition beside the title's:
	// the window's via-search effect over its 13 weeks.
	for _, ch := range fitfoldertest.Upper {
		e := fxEffect(t, fx, ch, "via_search", "2025Q3")
		want := fmt.Sprintf("%s / 13 = %s a week", plots.Number(e.Mean), plots.About(e.Mean/13))
		if !strings.Contains(fig.Caption, want) {
			t.Errorf("caption %q lacks %q", fig.Caption, want)
		}
	}
}

// TestPartialQuarterCharts names 2025Q4, of which the fixture holds 12 of
// 13 weeks, as partial in the charts' titles and captions.
func TestPartialQuarterCharts(t *testing.T) {
	_, f := load(t, false)
	for _, name := range []string{"split", "weekly"} {
		fig := build(t, f, "2025Q4", name)
		if !strings.Contains(fig.Title, "2025Q4 (partial: 12 of 13 weeks)") {
			t.Errorf("%s title %q does not say 2025Q4 is partial", name, fig.Title)
		}
		if !strings.Contains(fig.Caption, "carryover past it is not counted") {
			t.Errorf("%s caption %q does not say the carryover is cut", name, fig.Caption)
		}
	}
	if fig := build(t, f, "2025Q3", "split"); strings.Contains(fig.Title+fig.Caption, "partial") {
		t.Errorf("2025Q3 is a full quarter: %q", fig.Title)
	}
}

// TestLabels draws the charts with display names and a currency and
// finds them in the titles and on the spend axis.
func TestLabels(t *testing.T) {
	_, loaded := load(t, false)
	f := *loaded
	f.Run.Labels = fitfolder.Labels{Channels: map[string]string{"video_spend": "Online video"}, Outcome: "orders", Currency: "EUR"}
	fig := build(t, &f, "", "split")
	if !strings.Contains(fig.Title, "Online video's effect") || !strings.Contains(fig.Caption, "incremental orders") {
		t.Errorf("split: title %q, caption %q", fig.Title, fig.Caption)
	}
	fig = build(t, &f, "", "curves")
	if !strings.Contains(fig.Title, "through Online video") {
		t.Errorf("curves title %q", fig.Title)
	}
	figs, err := plots.Build(&f, "")
	if err != nil {
		t.Fatal(err)
	}
	for _, fg := range figs {
		if strings.Contains(fg.Title+fg.Caption, "conversions") {
			t.Errorf("%s still says conversions: %q", fg.Name, fg.Title)
		}
	}
}

func TestFitNumbers(t *testing.T) {
	fx, f := load(t, false)
	fig := build(t, f, "", "fit")
	for _, st := range []string{"demand", "outcome"} {
		inside, n := 0, 0
		for _, r := range fx.Fitted {
			if r.Stage == st {
				n++
				if r.Actual >= r.Q05 && r.Actual <= r.Q95 {
					inside++
				}
			}
		}
		got := find(t, fig, st, "coverage").Y[0]
		if want := float64(inside) / float64(n); got != want {
			t.Errorf("%s coverage: got %v, want %v", st, got, want)
		}
		if !strings.Contains(fig.Title, plots.Percent(got)) {
			t.Errorf("title %q lacks %s", fig.Title, plots.Percent(got))
		}
		if len(find(t, fig, st, "actual").Y) != 156 {
			t.Errorf("%s: not every week drawn", st)
		}
	}
}

func TestSensitivityNumbers(t *testing.T) {
	fx, f := load(t, false)
	fig := build(t, f, "", "sensitivity")
	s := find(t, fig, "video_spend", "via_search")
	if len(s.X) != 19 || s.X[0] != -0.9 || s.X[18] != 0.9 {
		t.Fatalf("video rho grid: %v", s.X)
	}
	for i, r := range fx.Sensitivity[:19] {
		if s.Y[i] != r.Mean || s.Lo[i] != r.Q05 || s.Hi[i] != r.Q95 {
			t.Fatalf("rho %v: got %v, want %v", r.Rho, s.Y[i], r.Mean)
		}
	}
	if be := find(t, fig, "video_spend", "breakeven"); be.X[0] != 0.45 {
		t.Errorf("video break-even: got %v, want 0.45", be.X[0])
	}
	if _, ok := fig.Find("audio_spend", "breakeven"); ok {
		t.Error("audio has no break-even in range but one was drawn")
	}
	if !strings.Contains(fig.Title, "rho = 0.45") || !strings.Contains(fig.Title, "audio's stays above zero") {
		t.Errorf("title %q", fig.Title)
	}
	// The benchmark: the error correlation that leaving out price would
	// cause, from the posterior means in summary.csv.
	mean := func(name string) float64 {
		for _, st := range f.Stages {
			for _, p := range st.Params {
				if p.Name == name && st.Name != "naive" {
					return p.Mean
				}
			}
		}
		t.Fatalf("no %s", name)
		return 0
	}
	want := mediation.OmittedControlRho(mean("phi_q[price]"), mean("phi_y[price]"), mean("sigma_q"), mean("sigma_y"), 1)
	if b, ok := fig.Find("video_spend", "benchmark/price"); want >= -0.95 && want <= 0.95 && (!ok || b.X[0] != want) {
		t.Errorf("price benchmark: got %v, want %v", b.X, want)
	}
}

func TestDiagnosticsNumbers(t *testing.T) {
	fx, f := load(t, true)
	fig := build(t, f, "", "diagnostics")
	rh := find(t, fig, "rhat", "outcome")
	i := slices.Index(rh.Labels, "K2[video_spend]")
	if i < 0 || rh.X[i] != 1.03 {
		t.Fatalf("outcome R-hat of K2[video_spend]: %v", rh)
	}
	if got := len(rh.X); got != len(fx.Params["outcome"]) {
		t.Errorf("outcome R-hat: %d dots, want %d", got, len(fx.Params["outcome"]))
	}
	if d := find(t, fig, "divergences", "total").Y[0]; d != 3 {
		t.Errorf("divergences: got %v, want 3", d)
	}
	if !strings.HasPrefix(fig.Title, "1 parameter fails") || !strings.Contains(fig.Title, "3 transitions diverged") {
		t.Errorf("title %q", fig.Title)
	}
	if fig.Warning == "" {
		t.Error("untrustworthy fit: no warning on the chart")
	}
	_, good := load(t, false)
	ok := build(t, good, "", "diagnostics")
	if !strings.HasPrefix(ok.Title, "Every parameter passes") || ok.Warning != "" {
		t.Errorf("trustworthy fit: title %q, warning %q", ok.Title, ok.Warning)
	}
}

func TestWriteFileAtomic(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "report.html")
	if err := plots.WriteFileAtomic(p, []byte("old")); err != nil {
		t.Fatal(err)
	}
	if err := plots.WriteFileAtomic(p, []byte("new")); err != nil {
		t.Fatal(err)
	}
	if b, _ := os.ReadFile(p); string(b) != "new" {
		t.Errorf("got %q, want new", b)
	}
	// Renaming over a folder fails: the old folder stays, no temporary
	// file is left behind.
	sub := filepath.Join(dir, "taken")
	os.Mkdir(sub, 0o755)
	os.WriteFile(filepath.Join(sub, "x"), []byte("x"), 0o644)
	if err := plots.WriteFileAtomic(sub, []byte("data")); err == nil {
		t.Error("writing over a non-empty folder: no error")
	}
	entries, _ := os.ReadDir(dir)
	if len(entries) != 2 {
		for _, e := range entries {
			t.Log(e.Name())
		}
		t.Errorf("folder holds %d entries, want 2 (no temporary files)", len(entries))
	}
	if err := plots.WriteFileAtomic(filepath.Join(dir, "missing", "a.png"), []byte("x")); err == nil {
		t.Error("writing into a missing folder: no error")
	}
}

func BenchmarkRenderAll(b *testing.B) {
	dir := b.TempDir()
	if _, err := fitfoldertest.Write(filepath.Join(dir, "fit"), fitfoldertest.Options{}); err != nil {
		b.Fatal(err)
	}
	f, err := fitfolder.Load(filepath.Join(dir, "fit"))
	if err != nil {
		b.Fatal(err)
	}
	for b.Loop() {
		if _, err := plots.Render(f, ""); err != nil {
			b.Fatal(err)
		}
	}
}
