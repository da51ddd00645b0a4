package main

import (
	"context"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"spillway/funnel/fitfolder/fitfoldertest"
)

func TestReportCommand(t *testing.T) {
	dir := reviewFit(t, fitfoldertest.Options{Untrustworthy: true})
	before := listDir(t, dir)
	code, out, errs := reviewRun(context.Background(), "report", "--fit", dir)
	if code != 0 {
		t.Fatalf("exit %d, stderr %q", code, errs)
	}
	path := filepath.Join(dir, "report.html")
	if strings.TrimSpace(out) != path {
		t.Errorf("stdout %q, want %q", out, path)
	}
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	s := string(b)
	for _, w := range []string{"Quarterly review: 2025Q3 (Jul–Sep 2025)", "Not trustworthy", "2025Q3 against the previous quarter",
		"data:image/png;base64,", "spillway run --data weekly.csv"} {
		if !strings.Contains(s, w) {
			t.Errorf("report lacks %q", w)
		}
	}
	if strings.Contains(s, "http://") || strings.Contains(s, "https://") {
		t.Error("report refers to the network")
	}
	// Only report.html was added: no temporary file is left.
	after := listDir(t, dir)
	if want := slices.Sorted(slices.Values(append(slices.Clone(before), "report.html"))); !slices.Equal(after, want) {
		t.Errorf("fit folder: got %v, want %v", after, want)
	}

	// Replacing needs --force; another window and --out work.
	if code, _, errs := reviewRun(context.Background(), "report", "--fit", dir); code != exitUsage || !strings.Contains(errs, "--force") {
		t.Errorf("second run: exit %d, stderr %q", code, errs)
	}
	if code, _, errs := reviewRun(context.Background(), "report", "--fit", dir, "--window", "all", "--force"); code != 0 {
		t.Fatalf("--force: exit %d, stderr %q", code, errs)
	}
	if b, _ := os.ReadFile(path); !strings.Contains(string(b), "Review of the whole period") {
		t.Error("--window all --force did not replace the report")
	}
	other := filepath.Join(t.TempDir(), "q2.html")
	if code, out, errs := reviewRun(context.Background(), "report", "--fit", dir, "--window", "2025Q2", "--out", other); code != 0 || strings.TrimSpace(out) != other {
		t.Fatalf("--out: exit %d, stdout %q, stderr %q", code, out, errs)
	}
	if b, _ := os.ReadFile(other); !strings.Contains(string(b), "Quarterly review: 2025Q2") {
		t.Error("--out report is not for 2025Q2")
	}
}

func TestReportErrors(t *testing.T) {
	dir := reviewFit(t, fitfoldertest.Options{Draws: 20})
	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{"report"}, "no fit folder"},
		{[]string{"report", "--fit", dir, "--window", "2030Q1"}, "available windows: all, 2023Q1"},
		{[]string{"report", "--fit", dir, "--out", dir}, "is a folder"},
	} {
		code, out, errs := reviewRun(context.Background(), c.args...)
		if code != exitUsage || out != "" || !strings.Contains(errs, c.want) {
			t.Errorf("%v: exit %d, stdout %q, stderr %q; want 2 and %q", c.args, code, out, errs, c.want)
		}
	}
	// A broken cell is bad data: exit 2 with the file, line and column.
	p := filepath.Join(dir, "effects.csv")
	b, _ := os.ReadFile(p)
	os.WriteFile(p, []byte(strings.Replace(string(b), "video_spend,direct,all,", "video_spend,direct,all,x", 1)), 0o644)
	code, _, errs := reviewRun(context.Background(), "report", "--fit", dir)
	if code != exitUsage || !strings.Contains(errs, "effects.csv line 2, column mean") {
		t.Errorf("broken effects.csv: exit %d, stderr %q", code, errs)
	}
	if _, err := os.Stat(filepath.Join(dir, "report.html")); err == nil {
		t.Error("a failed report command wrote report.html")
	}
}
