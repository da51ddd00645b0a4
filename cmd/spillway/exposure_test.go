package main

import (
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"testing"
)

// exposureFrame is cmdFrame with a column video_imp (file column 8):
// video's impressions at a cost per thousand of 12, then 15 from week 30
// (a step that the cost-per-unit warning catches).
func exposureFrame(n int) *cmdTable {
	f := cmdFrame(n)
	f.header = append(f.header, "video_imp")
	for t := range f.rows {
		v, _ := strconv.ParseFloat(f.rows[t][1], 64)
		cpm := 12.0
		if t >= 30 {
			cpm = 15
		}
		f.rows[t] = append(f.rows[t], strconv.FormatFloat(1000*v/cpm, 'f', 0, 64))
	}
	return f
}

// rfFrame is cmdFrame, or cmdRegions with regions, with columns
// video_reach (a tenth of video's spend, people) and video_freq (2.5).
func rfFrame(n int, regions bool) *cmdTable {
	f := cmdFrame(n)
	if regions {
		f = cmdRegions(n)
	}
	v := slices.Index(f.header, "video")
	f.header = append(f.header, "video_reach", "video_freq")
	for t := range f.rows {
		x, _ := strconv.ParseFloat(f.rows[t][v], 64)
		f.rows[t] = append(f.rows[t], strconv.FormatFloat(x/10, 'f', 0, 64), "2.5")
	}
	return f
}

var rfFlags = []string{"--reach", "video=video_reach", "--frequency", "video=video_freq"}

// TestExposureBadInput runs bad exposure mappings through inspect and fit:
// exit status 2, one message naming FILE:LINE:COLUMN or the flag, and no
// output folder left behind.
func TestExposureBadInput(t *testing.T) {
	for _, test := range []struct {
		name  string
		text  func() string
		flags []string
		want  string // after "spillway CMD: "; FILE is replaced by the data file's path
	}{
		{"exposure zero where spend is positive", func() string { return exposureFrame(60).set(12, "video_imp", "0").csv() },
			[]string{"--exposure", "video=video_imp"}, `FILE:14:8: column "video_imp": exposure is 0 in a week where video spends`},
		{"exposure where there is no spend", func() string { return exposureFrame(60).set(12, "video", "0").csv() },
			[]string{"--exposure", "video=video_imp"}, `FILE:14:8: column "video_imp": exposure is `},
		{"negative exposure", func() string { return exposureFrame(60).set(3, "video_imp", "-4").csv() },
			[]string{"--exposure", "video=video_imp"}, `FILE:5:8: column "video_imp": -4 is negative; exposure cannot be negative`},
		{"exposure column missing", func() string { return exposureFrame(60).csv() },
			[]string{"--exposure", "video=video_impressions"}, `FILE:1: column "video_impressions": not in the header (asked for by --exposure)`},
		{"exposure on paid search", func() string { return exposureFrame(60).csv() },
			[]string{"--exposure", "search=video_imp"}, `--exposure search=video_imp: "search" is a paid-search column`},
		{"exposure not a mapping", func() string { return exposureFrame(60).csv() },
			[]string{"--exposure", "video"}, `--exposure "video": expected SPEND=COLUMN`},
		{"exposure column with another role", func() string { return exposureFrame(60).csv() },
			[]string{"--exposure", "video=audio"}, `column "audio" is given to both --upper and --exposure`},
		{"break after the data", func() string { return exposureFrame(60).csv() },
			[]string{"--exposure", "video=video_imp", "--exposure-break", "video=2030-01-07"}, `--exposure-break video=2030-01-07: after the data`},
		{"break before the data", func() string { return exposureFrame(60).csv() },
			[]string{"--exposure", "video=video_imp", "--exposure-break", "video=2022-01-03"}, `--exposure-break video=2022-01-03: before the data`},
		{"break on the first week", func() string { return exposureFrame(60).csv() },
			[]string{"--exposure", "video=video_imp", "--exposure-break", "video=2023-01-02"}, `--exposure-break video=2023-01-02: the data's first week`},
		{"break not a week start", func() string { return exposureFrame(60).csv() },
			[]string{"--exposure", "video=video_imp", "--exposure-break", "video=2023-08-02"}, `--exposure-break video=2023-08-02: not a week start`},
		{"break not a date", func() string { return exposureFrame(60).csv() },
			[]string{"--exposure", "video=video_imp", "--exposure-break", "video=31/07/2023"}, `--exposure-break video=31/07/2023: "31/07/2023" is not a date`},
		{"break without exposure", func() string { return exposureFrame(60).csv() },
			[]string{"--exposure-break", "audio=2023-07-31"}, `--exposure-break "audio=2023-07-31": audio has no exposure column; a measurement break is in a channel's exposure`},
		{"two breaks on one channel", func() string { return exposureFrame(60).csv() },
			[]string{"--exposure", "video=video_imp", "--exposure-break", "video=2023-07-31", "--exposure-break", "video_imp=2023-08-07"},
			`--exposure-break "video_imp=2023-08-07": channel video already has one; one break per channel is supported`},
		{"error not a number", func() string { return exposureFrame(60).csv() },
			[]string{"--exposure", "video=video_imp", "--exposure-error", "video=15%"}, `--exposure-error "video=15%": expected COLUMN=SD`},
		{"error too large", func() string { return exposureFrame(60).csv() },
			[]string{"--exposure", "video=video_imp", "--exposure-error", "video=15"}, `--exposure-error video=15: expected the sd of the log error, a number from 0 to 2`},
		{"error without exposure", func() string { return exposureFrame(60).csv() },
			[]string{"--exposure-error", "audio=0.1"}, `--exposure-error "audio=0.1": audio has no exposure column`},
		{"frequency below 1", func() string { return rfFrame(60, false).set(9, "video_freq", "0.5").csv() },
			rfFlags, `FILE:11:9: column "video_freq": frequency 0.5 in a week with reach`},
		{"reach above the population", func() string { return rfFrame(60, true).set(4, "video_reach", "5000").csv() },
			append(append([]string(nil), regionFlags...), rfFlags...), `FILE:6:10: column "video_reach": reach 5000 is above the region's population 1000`},
		{"reach without frequency", func() string { return rfFrame(60, false).csv() },
			[]string{"--reach", "video=video_reach"}, `--reach video=video_reach: no --frequency video=COLUMN`},
		{"frequency with impressions", func() string { return rfFrame(60, false).csv() },
			[]string{"--exposure", "video=video_reach", "--frequency", "video=video_freq"}, `--frequency "video=video_freq": the exposure of video is given with --exposure`},
	} {
		t.Run(test.name, func(t *testing.T) {
			dir := t.TempDir()
			path := writeFileIn(t, dir, "data.csv", test.text())
			want := strings.ReplaceAll(test.want, "FILE", path)
			code, out, errs := runCmd(t, inspectArgs(path, test.flags...)...)
			if code != exitUsage || out != "" || !strings.HasPrefix(errs, "spillway inspect: "+want) {
				t.Errorf("inspect: got %d, stdout %q, stderr %q; want 2 and a message starting %q", code, out, errs, want)
			}
			args := append([]string{"fit", "--quiet", "--out", filepath.Join(dir, "results")}, inspectArgs(path, test.flags...)[1:]...)
			code, _, errs = runCmd(t, args...)
			if code != exitUsage || !strings.HasPrefix(errs, "spillway fit: "+want) {
				t.Errorf("fit: got %d, stderr %q", code, errs)
			}
			if names := dirNames(t, dir); !slices.Equal(names, []string{"data.csv"}) {
				t.Errorf("fit left %v behind", names)
			}
		})
	}
}

// TestExposureInspect checks a good mapping: inspect succeeds, and the
// step in video's cost per thousand from 12 to 15 in week 30 (2023-07-31)
// is warned about with the flag that would declare it, and the summary
// lists the exposure column and the cost per unit.
func TestExposureInspect(t *testing.T) {
	path := writeFileIn(t, t.TempDir(), "data.csv", exposureFrame(60).csv())
	code, out, errs := runCmd(t, inspectArgs(path, "--exposure", "video=video_imp")...)
	if code != 0 {
		t.Fatalf("got %d: %s", code, errs)
	}
	// the exposure column in the column table, and the cost per unit table
	// with the first and last 13 weeks' medians (12 and 15 per thousand)
	if !regexp.MustCompile(`(?m)^video_imp +exposure `).MatchString(out) ||
		!regexp.MustCompile(`(?m)^video +video_imp +.* 0\.012 +0\.015 +\+25% +-$`).MatchString(out) {
		t.Errorf("inspect's summary lacks the exposure column or its cost per unit:\n%s", out)
	}
	if want := "the cost per unit of video_imp (video / video_imp) jumps by +25% around the week of 2023-07-31"; !strings.Contains(errs, want) ||
		!strings.Contains(errs, "--exposure-break video=2023-07-31") {
		t.Errorf("stderr %q; want the warning %q", errs, want)
	}
	// with the break declared the warning has been acted on
	if code, _, errs := runCmd(t, inspectArgs(path, "--exposure", "video=video_imp", "--exposure-break", "video_imp=2023-07-31")...); code != 0 || errs != "" {
		t.Fatalf("with the break: got %d: %q", code, errs)
	}
}

// TestReachFrequencyInspect checks that a good reach and frequency mapping
// is accepted, national and with regions (where the frequency sums as
// impressions).
func TestReachFrequencyInspect(t *testing.T) {
	for _, regions := range []bool{false, true} {
		path := writeFileIn(t, t.TempDir(), "data.csv", rfFrame(60, regions).csv())
		more := rfFlags
		if regions {
			more = append(append([]string(nil), regionFlags...), rfFlags...)
		}
		if code, _, errs := runCmd(t, inspectArgs(path, more...)...); code != 0 {
			t.Fatalf("regions %v: got %d: %s", regions, code, errs)
		}
	}
}

// TestExposureFitSplit fits simulated data with a break, an error and reach
// and frequency through the commands (short chains), then splits the fit
// folder again: spec.json keeps the measurement, data.csv the exposure
// columns, and the split of the folder read back reproduces the effects,
// curves and returns byte for byte.
func TestExposureFitSplit(t *testing.T) {
	if testing.Short() {
		t.Skip("fits")
	}
	dir := t.TempDir()
	sim := filepath.Join(dir, "sim")
	if code, _, errs := runCmd(t, "simulate", "--scenario", "reach-frequency", "--out", sim); code != 0 {
		t.Fatalf("simulate: %d %s", code, errs)
	}
	out := filepath.Join(dir, "fit")
	args := append([]string{"run", "--data", filepath.Join(sim, "data.csv"), "--date", "week", "--upper", "video_spend,audio_spend",
		"--search", "search_spend", "--queries", "branded_queries", "--outcome", "conversions", "--controls", "price",
		"--reach", "video_spend=video_reach", "--frequency", "video_spend=video_frequency",
		"--exposure-break", "video_spend=2024-07-01", "--exposure-error", "video_spend=0.1", "--out", out}, quick...)
	if code, _, errs := runCmd(t, args...); code != 0 {
		t.Fatalf("run: %d %s", code, errs)
	}
	spec, err := os.ReadFile(filepath.Join(out, "spec.json"))
	if err != nil {
		t.Fatal(err)
	}
	if want := `"exposure": [
      {
        "spend": "video_spend",
        "column": "video_reach",
        "break": "2024-07-01",
        "error": 0.1,
        "frequency": "video_frequency"
      }
    ]`; !strings.Contains(string(spec), want) {
		t.Errorf("spec.json lacks the measurement %s:\n%s", want, spec)
	}
	header, err := os.ReadFile(filepath.Join(out, "data.csv"))
	if err != nil {
		t.Fatal(err)
	}
	if h, _, _ := strings.Cut(string(header), "\n"); !strings.HasSuffix(h, ",price,video_reach,video_frequency") {
		t.Errorf("data.csv header %q", h)
	}
	before := map[string][]byte{}
	for _, f := range []string{"effects.csv", "curves.csv", "returns.csv"} {
		if before[f], err = os.ReadFile(filepath.Join(out, f)); err != nil {
			t.Fatal(err)
		}
	}
	if code, _, errs := runCmd(t, "split", "--fit", out); code != 0 {
		t.Fatalf("split: %d %s", code, errs)
	}
	for f, b := range before {
		a, err := os.ReadFile(filepath.Join(out, f))
		if err != nil || !slices.Equal(a, b) {
			t.Errorf("%s differs after the split of the folder read back (%v)", f, err)
		}
	}
}
