package main

import (
	"bytes"
	"context"
	"image/png"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"spillway/funnel/fitfolder/fitfoldertest"
	"spillway/plots"
)

// reviewRun runs spillway with args and returns the exit status and outputs.
func reviewRun(ctx context.Context, args ...string) (code int, stdout, stderr string) {
	var out, errb bytes.Buffer
	code = run(ctx, args, &out, &errb)
	return code, out.String(), errb.String()
}

// reviewFit writes a fixture fit folder (as fit and split leave it).
func reviewFit(t *testing.T, o fitfoldertest.Options) string {
	t.Helper()
	if o.Draws == 0 {
		o.Draws = 100
	}
	dir := filepath.Join(t.TempDir(), "fit1")
	if _, err := fitfoldertest.Write(dir, o); err != nil {
		t.Fatal(err)
	}
	return dir
}

// listDir returns the names in dir, sorted.
func listDir(t *testing.T, dir string) []string {
	t.Helper()
	es, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	var names []string
	for _, e := range es {
		names = append(names, e.Name())
	}
	slices.Sort(names)
	return names
}

func TestChartCommand(t *testing.T) {
	dir := reviewFit(t, fitfoldertest.Options{})
	before := listDir(t, dir)
	code, out, errs := reviewRun(context.Background(), "chart", "--fit", dir)
	if code != 0 {
		t.Fatalf("exit %d, stderr %q", code, errs)
	}
	if !strings.Contains(errs, "window 2025Q3 (the last full quarter") {
		t.Errorf("stderr %q does not name the default window", errs)
	}
	lines := strings.Split(strings.TrimSpace(out), "\n")
	if len(lines) != len(plots.Names) {
		t.Fatalf("stdout lists %d files, want %d:\n%s", len(lines), len(plots.Names), out)
	}
	for i, n := range plots.Names {
		want := filepath.Join(dir, "charts", n+".png")
		if lines[i] != want {
			t.Errorf("line %d: %q, want %q", i, lines[i], want)
		}
		b, err := os.ReadFile(want)
		if err != nil {
			t.Fatal(err)
		}
		img, err := png.Decode(bytes.NewReader(b))
		if err != nil || img.Bounds().Dx() != plots.WidthPx || img.Bounds().Dy() != plots.HeightPx {
			t.Errorf("%s: not a %dx%d PNG (%v)", n, plots.WidthPx, plots.HeightPx, err)
		}
	}
	// Only charts/ was added, and it holds only the PNGs.
	after := listDir(t, dir)
	if want := append(slices.Clone(before), "charts"); !slices.Equal(after, slices.Sorted(slices.Values(want))) {
		t.Errorf("fit folder: got %v, want %v plus charts", after, before)
	}
	if got := listDir(t, filepath.Join(dir, "charts")); len(got) != len(plots.Names) {
		t.Errorf("charts folder holds %v", got)
	}

	// A second run refuses to replace the charts without --force.
	old, _ := os.ReadFile(filepath.Join(dir, "charts", "split.png"))
	code, _, errs = reviewRun(context.Background(), "chart", "--fit", dir, "--window", "2025Q2")
	if code != exitUsage || !strings.Contains(errs, "--force") {
		t.Errorf("second run: exit %d, stderr %q; want 2 and a hint at --force", code, errs)
	}
	if now, _ := os.ReadFile(filepath.Join(dir, "charts", "split.png")); !bytes.Equal(now, old) {
		t.Error("second run without --force changed split.png")
	}
	code, _, errs = reviewRun(context.Background(), "chart", "--fit", dir, "--window", "2025Q2", "--force")
	if code != 0 {
		t.Fatalf("--force: exit %d, stderr %q", code, errs)
	}
	if now, _ := os.ReadFile(filepath.Join(dir, "charts", "split.png")); bytes.Equal(now, old) {
		t.Error("--force --window 2025Q2 left split.png unchanged")
	}
	if strings.Contains(errs, "last full quarter") {
		t.Errorf("an explicit window still printed the default note: %q", errs)
	}

	// --out writes elsewhere.
	other := filepath.Join(t.TempDir(), "slides")
	if code, _, errs := reviewRun(context.Background(), "chart", "--fit", dir, "--window", "all", "--out", other); code != 0 {
		t.Fatalf("--out: exit %d, stderr %q", code, errs)
	}
	if got := listDir(t, other); len(got) != len(plots.Names) {
		t.Errorf("--out folder holds %v", got)
	}
}

func TestChartErrors(t *testing.T) {
	dir := reviewFit(t, fitfoldertest.Options{Draws: 20})
	broken := reviewFit(t, fitfoldertest.Options{Draws: 20})
	os.Remove(filepath.Join(broken, "curves.csv"))
	for _, c := range []struct {
		args []string
		want []string
	}{
		{[]string{"chart"}, []string{"no fit folder", "--fit"}},
		{[]string{"chart", "--fit", filepath.Join(dir, "nope")}, []string{"does not exist"}},
		{[]string{"chart", "--fit", dir, "--window", "2019Q1"}, []string{`window "2019Q1" is not in effects.csv`, "available windows: all, 2023Q1", "2025Q4", fitfoldertest.CustomWindow}},
		{[]string{"chart", "--fit", dir, "--window", "last"}, []string{"not all, a quarter", "available windows"}},
		{[]string{"chart", "--fit", broken}, []string{"curves.csv", "missing", "spillway split"}},
		{[]string{"chart", "--fit", dir, "extra"}, []string{"unexpected argument"}},
		{[]string{"chart", "--fit", dir, "--out", filepath.Join(dir, "no", "such")}, []string{"does not exist"}},
	} {
		code, out, errs := reviewRun(context.Background(), c.args...)
		if code != exitUsage || out != "" {
			t.Errorf("%v: exit %d, stdout %q; want 2 and nothing on stdout", c.args, code, out)
		}
		for _, w := range c.want {
			if !strings.Contains(errs, w) {
				t.Errorf("%v: stderr %q lacks %q", c.args, errs, w)
			}
		}
	}
	if _, err := os.Stat(filepath.Join(dir, "charts")); err == nil {
		t.Error("a failed chart command left a charts folder")
	}
	// An interrupted run writes nothing.
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if code, _, _ := reviewRun(ctx, "chart", "--fit", dir); code != exitInterrupted {
		t.Errorf("cancelled: exit %d, want %d", code, exitInterrupted)
	}
	if _, err := os.Stat(filepath.Join(dir, "charts")); err == nil {
		t.Error("an interrupted chart command left a charts folder")
	}
}

func TestChartHelp(t *testing.T) {
	code, out, _ := reviewRun(context.Background(), "chart", "--help")
	if code != 0 {
		t.Fatalf("exit %d", code)
	}
	for _, w := range []string{"Usage: spillway chart --fit FOLDER", "--window WINDOW", "--force", "EXAMPLE", "EXIT STATUS", "split.png", "diagnostics.png"} {
		if !strings.Contains(out, w) {
			t.Errorf("help lacks %q", w)
		}
	}
}
