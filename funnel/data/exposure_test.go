package data

import (
	"bytes"
	"math"
	"math/rand/v2"
	"reflect"
	"strconv"
	"strings"
	"testing"
)

// exposureFrameData is baseFrame with audio's impressions (column aud_imp)
// bought at a cost per thousand of 20 in every region's rows, and the spec
// that maps them.
func exposureFrameData(f *frame) (*frame, Spec) {
	f.header = append(f.header, "aud_imp")
	a := f.col("audio")
	for i, r := range f.rows {
		v, _ := strconv.ParseFloat(r[a], 64)
		f.rows[i] = append(f.rows[i], strconv.FormatFloat(1000*v/20, 'f', 1, 64))
	}
	s := withSpec(func(s *Spec) { s.Exposure = []Exposure{{Spend: "audio", Column: "aud_imp"}} })
	if f.header[1] == "region" {
		s.Region, s.Population = "region", "population"
	}
	return f, s
}

// TestExposureRead checks that the exposure column lands in Series.Exposure
// beside its spend column (nil for video), that the national series sums
// it, and that WriteCSV writes it last and reads back the same.
func TestExposureRead(t *testing.T) {
	for _, f := range []*frame{baseFrame(60), regionFrame(60)} {
		f, spec := exposureFrameData(f)
		d := mustRead(t, f.csv(), spec)
		r := d.Regions[0]
		if r.Exposure == nil || r.Exposure[0] != nil || len(r.Exposure[1]) != 60 {
			t.Fatalf("Exposure %v, want [nil, 60 weeks]", r.Exposure)
		}
		if got, want := r.Exposure[1][3], r.Upper[1][3]*1000/20; math.Abs(got-want) > 0.05 {
			t.Errorf("week 3 exposure %v, want %v", got, want)
		}
		nat := d.National()
		sum := 0.0
		for _, g := range d.Regions {
			sum += g.Exposure[1][7]
		}
		if nat.Exposure[0] != nil || nat.Exposure[1][7] != sum {
			t.Errorf("national exposure week 7 %v, want the regions' sum %v", nat.Exposure[1][7], sum)
		}
		var buf bytes.Buffer
		if err := WriteCSV(&buf, d); err != nil {
			t.Fatal(err)
		}
		if header, _, _ := strings.Cut(buf.String(), "\n"); !strings.HasSuffix(header, ",price,aud_imp") {
			t.Errorf("header %q, want the exposure column last", header)
		}
		e, err := Read(bytes.NewReader(buf.Bytes()), "data.csv", spec)
		if err != nil {
			t.Fatal(err)
		}
		if !reflect.DeepEqual(d, e) {
			t.Errorf("Read(WriteCSV(d)) differs from d")
		}
	}
}

// TestExposureSpecFile checks both spellings of "exposure" in a spec file
// and a break date in the list form.
func TestExposureSpecFile(t *testing.T) {
	for _, text := range []string{
		`{"date": "week", "upper": ["video", "audio"], "exposure": {"audio": "aud_imp", "video": "vid_imp"}}`,
		`{"date": "week", "upper": ["video", "audio"], "exposure": [{"spend": "audio", "column": "aud_imp"}, {"spend": "video", "column": "vid_imp", "break": "2023-07-31"}]}`,
	} {
		s, err := ParseSpec([]byte(text), "spec.json")
		if err != nil {
			t.Fatal(err)
		}
		if len(s.Exposure) != 2 || s.Exposure[0] != (Exposure{Spend: "audio", Column: "aud_imp"}) || s.Exposure[1].Column != "vid_imp" {
			t.Errorf("%s: exposure %+v", text, s.Exposure)
		}
		if got := s.Columns(); strings.Join(got, ",") != "week,video,audio,vid_imp,aud_imp" {
			t.Errorf("columns %v: want the exposure columns in the order of their spend columns", got)
		}
	}
	_, err := ParseSpec([]byte(`{"date": "week",
  "exposure": ["video"]}`), "spec.json")
	if err == nil || !strings.HasPrefix(err.Error(), `spec.json:2:15: "exposure" must map spend columns`) {
		t.Errorf("error %v", err)
	}
}

// TestCostJump checks the cost-per-unit rule on simulated log cost per
// unit, weekly noise sd 0.03: a steady 30% rise over two years never warns;
// a 20% step warns, at its week; noise alone does not.
func TestCostJump(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 7))
	series := func(T int, at func(t int) float64) []float64 {
		L := make([]float64, T)
		for i := range L {
			L[i] = math.Log(12) + at(i) + 0.03*rng.NormFloat64()
		}
		return L
	}
	for rep := range 20 {
		if k, step, _ := CostJump(series(104, func(t int) float64 { return math.Log(1 + 0.3*float64(t)/103) })); k >= 0 {
			t.Errorf("replicate %d: a steady rise warns at week %d (step %v)", rep, k, step)
		}
		if k, step, _ := CostJump(series(104, func(int) float64 { return 0 })); k >= 0 {
			t.Errorf("replicate %d: noise alone warns at week %d (step %v)", rep, k, step)
		}
		k, step, _ := CostJump(series(104, func(t int) float64 {
			if t >= 61 {
				return math.Log(1.2)
			}
			return 0
		}))
		if k < 59 || k > 63 || math.Abs(step-math.Log(1.2)) > 0.05 {
			t.Errorf("replicate %d: a 20%% step at week 61 found at %d, step %v", rep, k, step)
		}
	}
}

// TestFrequencyNational checks that the national frequency is the
// reach-weighted mean of the regions' (impressions sum, reach sums), and
// that reach and frequency round-trip through WriteCSV.
func TestFrequencyNational(t *testing.T) {
	f := regionFrame(60)
	a := f.col("audio")
	f.header = append(f.header, "aud_reach", "aud_freq")
	for i, r := range f.rows {
		v, _ := strconv.ParseFloat(r[a], 64)
		fr := "2"
		if r[1] == "south" {
			fr = "3.5"
		}
		reach := "0"
		if v > 0 {
			reach = strconv.FormatFloat(math.Round(v/100), 'f', 0, 64)
		}
		f.rows[i] = append(f.rows[i], reach, fr)
	}
	spec := withSpec(func(s *Spec) {
		s.Region, s.Population = "region", "population"
		s.Exposure = []Exposure{{Spend: "audio", Column: "aud_reach", Frequency: "aud_freq"}}
	})
	d := mustRead(t, f.csv(), spec)
	nat := d.National()
	for w := range 60 {
		imp, reach := 0.0, 0.0
		for _, g := range d.Regions {
			imp += g.Exposure[1][w] * g.Frequency[1][w]
			reach += g.Exposure[1][w]
		}
		if reach > 0 && math.Abs(nat.Frequency[1][w]-imp/reach) > 1e-12 {
			t.Fatalf("week %d: national frequency %v, want %v", w, nat.Frequency[1][w], imp/reach)
		}
	}
	var buf bytes.Buffer
	if err := WriteCSV(&buf, d); err != nil {
		t.Fatal(err)
	}
	e, err := Read(bytes.NewReader(buf.Bytes()), "data.csv", spec)
	if err != nil || !reflect.DeepEqual(d, e) {
		t.Fatalf("Read(WriteCSV(d)) differs from d (%v)", err)
	}
}

// TestExposureSummary checks inspect's summary of an exposure channel:
// audio's impressions bought at 20 per thousand in the first 30 weeks and
// 25 after (a step of +25%, declared as a break so it does not warn) are
// listed as an exposure column with their total, and the cost per unit
// summary gives 20 over the first 13 weeks with spend, 25 over the last,
// a median between, and the break.
func TestExposureSummary(t *testing.T) {
	f := baseFrame(60)
	f.header = append(f.header, "aud_imp")
	a, w := f.col("audio"), f.col("week")
	want := 0.0
	for i, r := range f.rows {
		v, _ := strconv.ParseFloat(r[a], 64)
		cpm := 20.0
		if i >= 30 {
			cpm = 25
		}
		f.rows[i] = append(f.rows[i], strconv.FormatFloat(1000*v/cpm, 'f', -1, 64))
		want += 1000 * v / cpm
	}
	brk := f.rows[30][w]
	spec := withSpec(func(s *Spec) { s.Exposure = []Exposure{{Spend: "audio", Column: "aud_imp", Break: brk}} })
	s := Summarize(mustRead(t, f.csv(), spec))
	last := s.Columns[len(s.Columns)-1]
	if last.Name != "aud_imp" || last.Role != "exposure" || math.Abs(last.Total-want) > 1e-6*want {
		t.Errorf("last column %+v, want aud_imp, exposure, total %v", last, want)
	}
	if len(s.Costs) != 1 {
		t.Fatalf("Costs %+v, want one", s.Costs)
	}
	c := s.Costs[0]
	near := func(a, b float64) bool { return math.Abs(a-b) < 1e-9 }
	if c.Spend != "audio" || c.Column != "aud_imp" || c.Unit != "exposure" || c.Break != brk ||
		!near(c.First, 0.02) || !near(c.Last, 0.025) || !near(c.Min, 0.02) || !near(c.Max, 0.025) {
		t.Errorf("cost summary %+v, want audio per aud_imp, 0.02 first and min, 0.025 last and max, break %s", c, brk)
	}
	for _, wn := range s.Warnings {
		if wn.Kind == KindCostJump {
			t.Errorf("a declared break warned: %s", wn.Message)
		}
	}
	var buf bytes.Buffer
	if err := s.WriteText(&buf); err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(buf.String(), "Cost per unit") || !strings.Contains(buf.String(), "+25%") {
		t.Errorf("summary text lacks the cost per unit table or its +25%% change:\n%s", buf.String())
	}
}
