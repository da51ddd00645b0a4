package data

import (
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"
	"testing"
	"time"
)

func TestWarnings(t *testing.T) {
	tests := []struct {
		name   string
		frame  func() *frame
		spec   Spec
		kind   string
		column string
		want   string
	}{
		{"collinear", func() *frame {
			f := baseFrame(60)
			for i := range f.rows {
				v, _ := strconv.ParseFloat(f.rows[i][1], 64)
				f.set(i, "audio", num(0.5*v+float64(i%2)))
			}
			return f
		}, baseSpec, KindCollinear, "video,audio", `spend on "video" and "audio" is nearly collinear (correlation 1.00)`},
		{"sparse", func() *frame {
			f := baseFrame(60)
			for i := range f.rows {
				if i%13 != 0 { // weeks 0, 13, 26, 39, 52: 5 of 60
					f.set(i, "audio", "0")
				}
			}
			return f
		}, baseSpec, KindSparse, "audio", `"audio" has spend in only 5 of 60 weeks (under 10%)`},
		{"outlier", func() *frame { return baseFrame(60).set(30, "sales", "100000") }, baseSpec, KindOutlier, "sales",
			`"sales" has 1 week more than 5 robust standard deviations from its median`},
		{"spend outlier", func() *frame { return baseFrame(60).set(40, "search", "90000") }, baseSpec, KindOutlier, "search",
			wk(40) + " (90000)"},
		{"regional outlier", func() *frame { return regionFrame(60).set(3*12+1, "queries", "1e6") }, regionSpec, KindOutlier, "queries",
			`"queries" in region "south" has 1 week more than 5 robust standard deviations from its median`},
		{"no spend in a region", func() *frame {
			f := regionFrame(60)
			for t := range 60 {
				f.set(3*t+2, "audio", "0")
			}
			return f
		}, regionSpec, KindSparse, "audio", `"audio" has no spend in region "west"`},
	}
	for _, test := range tests {
		d := mustRead(t, test.frame().csv(), test.spec)
		found := false
		for _, w := range d.Warnings {
			if w.Kind == test.kind && w.Column == test.column && strings.Contains(w.Message, test.want) {
				found = true
			}
		}
		if !found {
			t.Errorf("%s: no %s warning on %s containing %q; got %v", test.name, test.kind, test.column, test.want, d.Warnings)
		}
	}
}

func TestMedian(t *testing.T) {
	// Closed form.
	if got := median([]float64{3, 1, 2}); got != 2 {
		t.Errorf("odd: got %v, want 2", got)
	}
	if got := median([]float64{4, 1, 3, 2}); got != 2.5 {
		t.Errorf("even: got %v, want 2.5", got)
	}
	if !math.IsNaN(median(nil)) {
		t.Error("empty: want NaN")
	}
}

func TestOutlierThreshold(t *testing.T) {
	// Values 0..9 and one more value v > 9 have median 5 and MAD 3
	// (deviations 0,1,1,2,2,3,3,4,4,5,v-5; by hand); 5 robust sds are
	// 5 * 1.4826 * 3 = 22.239, so 27.2 (deviation 22.2) is not an outlier and
	// 27.3 (deviation 22.3) is.
	x := []float64{0, 1, 2, 3, 4, 5, 6, 7, 8, 9}
	weeks := baseFrameWeeks(len(x) + 1)
	if _, ok := outliers("q", "", append(x, 27.2), weeks, false); ok {
		t.Error("27.2 flagged; it lies 4.99 robust sds from the median")
	}
	if _, ok := outliers("q", "", append(x, 27.3), weeks, false); !ok {
		t.Error("27.3 not flagged; it lies 5.01 robust sds from the median")
	}
	// spend is judged on the log scale: spend 1..10 (log median 1.79, log MAD 0.41; by
	// hand) is not flagged at 60 but is at 1e4
	s := []float64{1, 2, 3, 4, 5, 6, 7, 8, 9, 10}
	if _, ok := outliers("s", "", append(s, 60), weeks, true); ok {
		t.Error("spend 60 flagged among 1..10 on the log scale")
	}
	if _, ok := outliers("s", "", append(s, 1e4), weeks, true); !ok {
		t.Error("spend 1e4 not flagged among 1..10 on the log scale")
	}
}

// TestFlatAndCaseWarnings: a spend column at one value in all weeks but one
// is flat (its effect would repeat the prior); column and region names that
// differ only in case are named; a flighted column (on/off) is not flat.
// Flatness is judged on the national series (two regions: 2 x 30000).
func TestFlatAndCaseWarnings(t *testing.T) {
	var b strings.Builder
	b.WriteString("week,region,Video,video,audio,search,queries,sales\n")
	for i := range 60 {
		wk := time.Date(2023, 1, 2, 0, 0, 0, 0, time.UTC).AddDate(0, 0, 7*i).Format(DateLayout)
		for g, r := range []string{"North", "north"} {
			x := float64(i)
			video := 30000.0
			if i == 17 {
				video = 12000
			}
			audio := 0.0
			if (i/4)%2 == 0 {
				audio = 5000 // flighted: on four weeks, off four
			}
			fmt.Fprintf(&b, "%s,%s,%g,%g,%g,%g,%g,%g\n", wk, r, 1+x, video, audio, 800+100*math.Sin(x/3)+float64(g), 5000+300*math.Cos(x/5), 2000+100*math.Sin(x/7))
		}
	}
	spec := Spec{Date: "week", Region: "region", Upper: []string{"video", "audio"}, Search: []string{"search"}, Queries: "queries", Outcome: "sales"}
	d, err := Read(strings.NewReader(b.String()), "data.csv", spec)
	if err != nil {
		t.Fatal(err)
	}
	var got []string
	for _, w := range d.Warnings {
		if w.Kind == KindFlat || w.Kind == KindNames {
			got = append(got, w.String())
		}
	}
	want := []string{
		`flat: "video" hardly moves (98% of weeks at 60000); the data can hardly tell its effect from the baseline, so its estimate will mostly repeat the prior`,
		`names: columns "Video" and "video" differ only in case; check that the flags name the one you mean`,
		`names: regions "North" and "north" differ only in case; they are fitted as two regions; if they are one, spell them alike`,
	}
	if !slices.Equal(got, want) {
		t.Errorf("warnings:\n got %q\nwant %q", got, want)
	}
}
