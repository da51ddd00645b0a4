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

// TestSmallCounts: whole numbers averaging under SmallCount a week are
// named, with the region of least mean (by hand: 19 and 20 alternate, mean
// 19.5); the same counts plus 1 (mean 20.5) and 19.25 and 19.75 (not whole
// numbers) are not.
func TestSmallCounts(t *testing.T) {
	counts := func(f *frame, rows func(week int) int, col string, lo, hi string) *frame {
		for w := range 60 {
			v := lo
			if w%2 == 1 {
				v = hi
			}
			f.set(rows(w), col, v)
		}
		return f
	}
	west := func(w int) int { return 3*w + 2 }
	south := func(w int) int { return 3*w + 1 }
	national := func(w int) int { return w }
	tests := []struct {
		name string
		f    *frame
		spec Spec
		want []string
	}{
		{"small outcome in one region", counts(regionFrame(60), west, "sales", "19", "20"), regionSpec,
			[]string{`counts: "sales" averages fewer than 20 a week in 1 of 3 regions (least: "west", 19.5); whole-number counts this small carry rounding and counting noise that the model's normal noise does not describe, which can bias the fit or give its posterior more than one mode; summing small regions into larger ones would help`}},
		{"two regions, the least named", counts(counts(regionFrame(60), west, "queries", "19", "20"), south, "queries", "3", "4"), regionSpec,
			[]string{`counts: "queries" averages fewer than 20 a week in 2 of 3 regions (least: "south", 3.5)`}},
		{"mean 20.5", counts(regionFrame(60), west, "sales", "20", "21"), regionSpec, nil},
		{"not whole numbers", counts(regionFrame(60), west, "sales", "19.25", "19.75"), regionSpec, nil},
		{"national", counts(baseFrame(60), national, "sales", "3", "6"), baseSpec,
			[]string{`counts: "sales" averages fewer than 20 a week (4.5); whole-number counts`, `read its intervals with that in mind`}},
	}
	for _, test := range tests {
		d := mustRead(t, test.f.csv(), test.spec)
		var got []string
		for _, w := range d.Warnings {
			if w.Kind == KindCounts {
				got = append(got, w.String())
			}
		}
		if len(test.want) == 0 {
			if len(got) != 0 {
				t.Errorf("%s: want no counts warning, got %q", test.name, got)
			}
			continue
		}
		if len(got) != 1 {
			t.Errorf("%s: want one counts warning, got %q", test.name, got)
			continue
		}
		for _, w := range test.want {
			if !strings.Contains(got[0], w) {
				t.Errorf("%s: warning %q lacks %q", test.name, got[0], w)
			}
		}
	}
}
