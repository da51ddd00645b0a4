package fitfolder_test

import (
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
	"time"

	"spillway/funnel/fitfolder"
	"spillway/funnel/fitfolder/fitfoldertest"
	"spillway/funnel/window"
)

func writeFixture(t *testing.T, o fitfoldertest.Options) (*fitfoldertest.Fixture, *fitfolder.Fit) {
	t.Helper()
	dir := filepath.Join(t.TempDir(), "fit")
	fx, err := fitfoldertest.Write(dir, o)
	if err != nil {
		t.Fatal(err)
	}
	f, err := fitfolder.Load(dir)
	if err != nil {
		t.Fatal(err)
	}
	return fx, f
}

func TestLoadRoundTrip(t *testing.T) {
	fx, f := writeFixture(t, fitfoldertest.Options{})
	if got, want := len(f.Data.Weeks), 156; got != want {
		t.Fatalf("weeks: got %d, want %d", got, want)
	}
	if !f.Data.Weeks[0].Equal(time.Date(2023, 1, 2, 0, 0, 0, 0, time.UTC)) {
		t.Errorf("first week %v", f.Data.Weeks[0])
	}
	if f.Run.Command != fx.Command || f.Run.Chains != 4 || f.Run.Seed != 11 {
		t.Errorf("spec.json: got %+v", f.Run)
	}
	if len(f.Effects) != len(fx.Effects) {
		t.Fatalf("effects: got %d rows, want %d", len(f.Effects), len(fx.Effects))
	}
	for i, e := range fx.Effects {
		g := f.Effects[i]
		if g.Channel != e.Channel || g.Path != e.Path || g.Window != e.Window || g.Mean != e.Mean ||
			g.Q05 != e.Q05 || g.Q95 != e.Q95 || !sameOrBothNaN(g.PerUnitSpend, e.PerUnitSpend) {
			t.Fatalf("effects row %d: got %+v, want %+v", i, g, e)
		}
	}
	for k, v := range fx.Draws {
		s, ok := f.EffectDraws[k]
		if !ok || len(s.Value) != len(v) {
			t.Fatalf("draws %v: got %d, want %d", k, len(s.Value), len(v))
		}
		for i := range v {
			if s.Draw[i] != i+1 || s.Value[i] != v[i] {
				t.Fatalf("draws %v[%d]: got (%d, %v), want (%d, %v)", k, i, s.Draw[i], s.Value[i], i+1, v[i])
			}
		}
	}
	if got := f.Data.Total("video_spend", f.Whole()); got != sum(fx.Columns["video_spend"]) {
		t.Errorf("video spend total: got %v, want %v", got, sum(fx.Columns["video_spend"]))
	}
	if len(f.Weekly) != len(fx.Weekly) || len(f.Curves) != len(fx.Curves) || len(f.Fitted) != len(fx.Fitted) ||
		len(f.Sensitivity) != 38 || len(f.Borrowed) != 4 {
		t.Errorf("row counts: weekly %d curves %d fitted %d sensitivity %d borrowed %d",
			len(f.Weekly), len(f.Curves), len(f.Fitted), len(f.Sensitivity), len(f.Borrowed))
	}
	// returns.csv reads back as written (float text round-trips exactly)
	if !slices.Equal(f.Returns, fx.Returns) || len(fx.Returns) == 0 {
		t.Errorf("returns.csv: %d rows read, %d written, or they differ", len(f.Returns), len(fx.Returns))
	}
	// priors_implied.csv reads back as written, NaN for no stated prior
	if len(f.Implied) != len(fx.Implied) || len(fx.Implied) != 3 {
		t.Fatalf("priors_implied.csv: %d rows read, %d written, want 3", len(f.Implied), len(fx.Implied))
	}
	for i, r := range fx.Implied {
		g := f.Implied[i]
		if g.Channel != r.Channel || g.Window != r.Window || g.Per != r.Per || g.Stated() != r.Stated() ||
			!sameOrBothNaN(g.StatedQ50, r.StatedQ50) || g.PriorQ95 != r.PriorQ95 || g.PostQ05 != r.PostQ05 {
			t.Errorf("priors_implied.csv row %d: got %+v, want %+v", i, g, r)
		}
	}
	if n := len(f.ImpliedFor("video_spend")); n != 2 {
		t.Errorf("video's implied rows: %d, want 2", n)
	}
	if r, ok := f.ReturnMeasure("video_spend", "all", "marginal_return"); !ok || r.Mean <= 0 {
		t.Errorf("marginal return of video: %v %v", r, ok)
	}
	if rho, ok := f.BreakevenRho("video_spend"); !ok || rho != 0.45 {
		t.Errorf("video break-even: got %v %v, want 0.45", rho, ok)
	}
	if rho, ok := f.BreakevenRho("audio_spend"); !ok || !math.IsNaN(rho) {
		t.Errorf("audio break-even: got %v %v, want NaN (empty cell)", rho, ok)
	}
	if !f.Verdict.Trustworthy || len(f.Verdict.Reasons) != 0 {
		t.Errorf("verdict: %+v", f.Verdict)
	}
	out, _ := f.Stage("outcome")
	if len(out.Params) != len(fx.Params["outcome"]) || out.Stats.WallSeconds != 12.5 {
		t.Errorf("outcome stage: %d params, wall %v", len(out.Params), out.Stats.WallSeconds)
	}
}

func TestVerdictReasons(t *testing.T) {
	_, f := writeFixture(t, fitfoldertest.Options{Untrustworthy: true, Draws: 50})
	if f.Verdict.Trustworthy {
		t.Fatal("verdict: got trustworthy")
	}
	want := fitfolder.Reason{Stage: "outcome", Text: "R-hat 1.03 > 1.01 for K2[video_spend]"}
	if len(f.Verdict.Reasons) != 3 || f.Verdict.Reasons[0] != want {
		t.Errorf("reasons: got %+v, want first %+v", f.Verdict.Reasons, want)
	}
	out, _ := f.Stage("outcome")
	if out.Stats.TotalDivergences() != 3 {
		t.Errorf("divergences: got %d, want 3", out.Stats.TotalDivergences())
	}
}

func TestDefaultWindow(t *testing.T) {
	_, f := writeFixture(t, fitfoldertest.Options{Draws: 20})
	// The last week starts 2025-12-22, so the week starting 2025-12-29
	// (still in Q4) is missing: 2025Q4 is not full and 2025Q3 is the last
	// full quarter.
	if got := f.DefaultWindow(); got != "2025Q3" {
		t.Errorf("default window: got %s, want 2025Q3", got)
	}
	if !f.FullQuarter(window.QuarterOf(2023, 1)) {
		t.Error("2023Q1 should be full: the week before 2023-01-02 starts in 2022")
	}
	w, err := f.Window("")
	if err != nil || w.Name != "2025Q3" || w.Label() != "2025Q3 (Jul–Sep 2025)" {
		t.Errorf("Window(\"\"): got %+v, %v", w, err)
	}
	all, err := f.Window("all")
	if err != nil || !all.Start.Equal(f.Data.Weeks[0]) || !all.End.Equal(f.Data.Weeks[155]) {
		t.Errorf("Window(all): got %+v, %v", all, err)
	}
	_, err = f.Window("2019Q1")
	var we *fitfolder.WindowError
	if !errors.As(err, &we) || !strings.Contains(err.Error(), "2025Q3") || !strings.Contains(err.Error(), fitfoldertest.CustomWindow) {
		t.Errorf("Window(2019Q1): got %v, want a WindowError listing the windows", err)
	}
	_, err = f.Window("last quarter")
	if !errors.As(err, &we) || we.Err == nil {
		t.Errorf("Window(last quarter): got %v, want a parse error", err)
	}
}

// TestLoadErrors checks that a broken file gives an error naming the file,
// the line and the column.
func TestLoadErrors(t *testing.T) {
	for _, c := range []struct {
		file, old, new string
		want           []string
	}{
		{"effects.csv", "", "", []string{"effects.csv", ErrMissingText}},
		{"effects.csv", "video_spend,direct,all,", "video_spend,direct,all,abc", []string{"effects.csv line 2, column mean", `"abc`}},
		{"curves.csv", "weekly_spend", "spend", []string{"curves.csv line 1, column weekly_spend", "missing column"}},
		{"verdict.txt", "trustworthy", "maybe", []string{"verdict.txt line 1", "maybe"}},
		{"data.csv", "2023-01-09", "2023-01-9", []string{"data.csv line 3, column week", "2023-01-9"}},
		{"weekly.csv", "video_spend,direct", "tv_spend,direct", []string{"weekly.csv line 2, column channel", "tv_spend"}},
		{"outcome/summary.csv", "gamma,", "gamma,x", []string{"summary.csv line", "column mean"}},
		{"priors_implied.csv", "video_spend,total,all,return_on_spend", "video_spend,both,all,return_on_spend", []string{"priors_implied.csv line 2, column path", `"both"`}},
		{"priors_implied.csv", "audio_spend,total,all,return_on_spend,1000", "audio_spend,total,all,return_on_spend,0", []string{"priors_implied.csv line", "column per"}},
	} {
		dir := filepath.Join(t.TempDir(), "fit")
		if _, err := fitfoldertest.Write(dir, fitfoldertest.Options{Draws: 10}); err != nil {
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
			t.Errorf("%s: no error", c.file)
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

const ErrMissingText = "run it first"

func sum(v []float64) float64 {
	s := 0.0
	for _, x := range v {
		s += x
	}
	return s
}

func sameOrBothNaN(a, b float64) bool {
	return a == b || (math.IsNaN(a) && math.IsNaN(b))
}

// TestUndefinedEffects checks that an effect split could not compute (a
// share in a window without spend, written as NaN) loads as NaN, while a
// NaN where a number is required is an error.
func TestUndefinedEffects(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "fit")
	fx, err := fitfoldertest.Write(dir, fitfoldertest.Options{Draws: 10})
	if err != nil {
		t.Fatal(err)
	}
	p := filepath.Join(dir, "effects.csv")
	b, _ := os.ReadFile(p)
	lines := strings.Split(string(b), "\n")
	for i, ln := range lines {
		if strings.HasPrefix(ln, "audio_spend,mediated_share,2024Q1,") {
			lines[i] = "audio_spend,mediated_share,2024Q1,NaN,NaN,NaN,NaN,,,,,"
		}
	}
	os.WriteFile(p, []byte(strings.Join(lines, "\n")), 0o644)
	f, err := fitfolder.Load(dir)
	if err != nil {
		t.Fatal(err)
	}
	e, ok := f.Effect("audio_spend", "mediated_share", "2024Q1")
	if !ok || !math.IsNaN(e.Mean) || !math.IsNaN(e.Q95) {
		t.Errorf("NaN share: got %+v", e)
	}
	if len(f.Effects) != len(fx.Effects) {
		t.Errorf("effects: %d rows, want %d", len(f.Effects), len(fx.Effects))
	}
	wp := filepath.Join(dir, "weekly.csv")
	wb, _ := os.ReadFile(wp)
	wl := strings.Split(string(wb), "\n")
	cells := strings.Split(wl[1], ",")
	cells[3] = "NaN"
	wl[1] = strings.Join(cells, ",")
	os.WriteFile(wp, []byte(strings.Join(wl, "\n")), 0o644)
	if _, err := fitfolder.Load(dir); err == nil || !strings.Contains(err.Error(), "weekly.csv line 2, column mean") {
		t.Errorf("NaN weekly mean: got %v, want an error naming weekly.csv line 2, column mean", err)
	}
}

// TestWriteLoadLossless checks that what the writer is given comes back
// from Load unchanged: spillway run draws its charts from the values in
// memory, chart and report from the files, and both must agree.
func TestWriteLoadLossless(t *testing.T) {
	fx, f := writeFixture(t, fitfoldertest.Options{Untrustworthy: true, Draws: 30})
	in := fx.Fit
	for _, c := range []struct {
		name      string
		got, want any
	}{
		{"spec.json", f.Run, in.Run},
		{"verdict.txt", f.Verdict, in.Verdict},
		{"effects.csv", f.Effects, in.Effects},
		{"effect_draws.csv", f.EffectDraws, in.EffectDraws},
		{"borrowed.csv", f.Borrowed, in.Borrowed},
		{"weekly.csv", f.Weekly, in.Weekly},
		{"sensitivity.csv", f.Sensitivity, in.Sensitivity},
		{"breakeven.csv", f.Breakeven, in.Breakeven},
		{"fitted.csv", f.Fitted, in.Fitted},
		{"curves.csv", f.Curves, in.Curves},
		{"data.csv", f.Data.Regions, in.Data.Regions},
	} {
		// %v spells every float64 exactly (and NaN as NaN).
		if g, w := fmt.Sprintf("%v", c.got), fmt.Sprintf("%v", c.want); g != w {
			t.Errorf("%s: read back differs from what was written", c.name)
		}
	}
	for k, s := range in.Stages {
		if g, w := fmt.Sprintf("%v %v", f.Stages[k].Params, f.Stages[k].Stats), fmt.Sprintf("%v %v", s.Params, s.Stats); g != w {
			t.Errorf("%s: summary.csv or stats.json read back differs", s.Name)
		}
	}
}

// TestWeeklyRange checks the range of weekly spend against the fixture's
// columns, weeks without spend left out.
func TestWeeklyRange(t *testing.T) {
	fx, f := writeFixture(t, fitfoldertest.Options{})
	for _, col := range []string{"video_spend", "audio_spend"} {
		lo, hi := math.Inf(1), math.Inf(-1)
		for _, v := range fx.Columns[col] {
			if v > 0 {
				lo, hi = math.Min(lo, v), math.Max(hi, v)
			}
		}
		gl, gh := f.Data.WeeklyRange(col)
		// data.csv stores the numbers as written, so allow rounding
		if math.Abs(gl-lo) > 1e-6*hi || math.Abs(gh-hi) > 1e-6*hi {
			t.Errorf("%s: range %g..%g, want %g..%g", col, gl, gh, lo, hi)
		}
	}
}
