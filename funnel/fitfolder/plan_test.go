package fitfolder

import (
	"errors"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"
	"time"
)

// TestPlanFiles writes a plan's files and reads them back: the same values
// (amounts in whole cents, no maximum as +Inf), and a bad cell located.
func TestPlanFiles(t *testing.T) {
	w := time.Date(2026, 1, 5, 0, 0, 0, 0, time.UTC)
	p := &Plan{
		Channels: []PlanChannel{
			{Channel: "video_spend", Current: 1709778.74, Planned: 1181053.76, Min: 0, Max: math.Inf(1),
				IncrementalCurrent: Interval{6721.1, 5967.7, math.NaN(), 7515.9}, IncrementalPlanned: Interval{5301.6, 4676.9, math.NaN(), 5965.4},
				Marginal: Interval{0.0031, 0.0027, math.NaN(), 0.0036}},
			{Channel: "search_spend", Current: 795244.65, Planned: 600000, Min: 1000, Max: 600000, AtLimit: "max",
				IncrementalCurrent: Interval{1, 0.5, math.NaN(), 2}, IncrementalPlanned: Interval{1, 0.5, math.NaN(), 2}, Marginal: Interval{0.004, 0.001, math.NaN(), 0.007}},
			{Channel: "audio_spend", Current: 260289.47, Planned: 260289.47, Min: 260289.47, Max: 260289.47, Locked: true},
		},
		Weekly: []PlanWeek{{w, "video_spend", 70637.25}, {w, "search_spend", 1234567.89}, {w, "audio_spend", 0}},
		Summary: PlanSummary{Objective: "mean", Pattern: "last", FirstWeek: "2026-01-05", Weeks: 1, AfterWeeks: 52, Draws: 4000,
			Budget: 2765312.86, CurrentTotal: 2765312.86, PlannedTotal: 2765312.86, Gain: Interval{1340, 492, 1295, 2300}, PBeatsCurrent: 0.996,
			Check: &PlanCheck{OK: true, Lambda: 0.0031, Failures: []string{}}, Warnings: []string{}, Command: "spillway allocate --fit f"},
	}
	files, err := p.Files()
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(string(files["plan.csv"]), "search_spend,795244.65,600000.00,1000.00,600000.00,false,max,") ||
		!strings.Contains(string(files["plan.csv"]), "video_spend,1709778.74,1181053.76,0.00,,false,,") {
		t.Errorf("plan.csv:\n%s", files["plan.csv"])
	}
	if !strings.Contains(string(files["plan_weekly.csv"]), "2026-01-05,search_spend,1234567.89\n") {
		t.Errorf("plan_weekly.csv:\n%s", files["plan_weekly.csv"])
	}
	dir := t.TempDir()
	for name, b := range files {
		os.WriteFile(filepath.Join(dir, name), b, 0o644)
	}
	if !HasPlan(dir) {
		t.Fatal("HasPlan: false")
	}
	back, err := ReadPlan(dir)
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(back.Weekly, p.Weekly) || !reflect.DeepEqual(back.Summary, p.Summary) {
		t.Errorf("read back %+v\nwrote %+v", back, p)
	}
	for i, c := range back.Channels {
		want := p.Channels[i]
		if c.Channel != want.Channel || c.Current != want.Current || c.Planned != want.Planned || c.Min != want.Min ||
			c.Max != want.Max || c.Locked != want.Locked || c.AtLimit != want.AtLimit || c.Marginal.Mean != want.Marginal.Mean {
			t.Errorf("row %d: read %+v, wrote %+v", i, c, want)
		}
	}
	bad := strings.Replace(string(files["plan.csv"]), "false,max", "false,top", 1)
	os.WriteFile(filepath.Join(dir, "plan.csv"), []byte(bad), 0o644)
	var fe *Error
	if _, err := ReadPlan(dir); !errors.As(err, &fe) || fe.Line != 3 || fe.Column != "at_limit" {
		t.Errorf("a bad at_limit: %v", err)
	}
	os.Remove(filepath.Join(dir, "plan_weekly.csv"))
	os.WriteFile(filepath.Join(dir, "plan.csv"), files["plan.csv"], 0o644)
	if _, err := ReadPlan(dir); !errors.Is(err, ErrMissing) {
		t.Errorf("no plan_weekly.csv: %v", err)
	}
}
