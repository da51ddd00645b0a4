package data

import (
	"bytes"
	"math"
	"slices"
	"strconv"
	"strings"
	"testing"
)

// summaryFrame has video = t+1, audio = 100 except 0 in weeks 5, 15, ...,
// 55, and search = 2t+5, for t = 0..59, so the summary has closed forms.
func summaryFrame() *frame {
	f := baseFrame(60)
	for t := range 60 {
		f.set(t, "video", strconv.Itoa(t+1)).set(t, "search", strconv.Itoa(2*t+5))
		if t%10 == 5 {
			f.set(t, "audio", "0")
		} else {
			f.set(t, "audio", "100")
		}
	}
	return f
}

func TestSummarize(t *testing.T) {
	d := mustRead(t, summaryFrame().csv(), baseSpec)
	s := Summarize(d)
	if s.Weeks != 60 || s.First.Format(DateLayout) != "2023-01-02" || s.Last.Format(DateLayout) != "2024-02-19" || len(s.Regions) != 0 {
		t.Errorf("got %d weeks %v to %v, %d regions", s.Weeks, s.First, s.Last, len(s.Regions))
	}
	video, audio, search := s.Columns[0], s.Columns[1], s.Columns[2]
	// Closed forms: 1..60 has median 30.5 and sum 60*61/2 = 1830; audio sums
	// to 54*100; search 2t+5 sums to 2*1770 + 300 = 3840.
	if video.Name != "video" || video.Role != "upper" || video.Min != 1 || video.Median != 30.5 || video.Max != 60 || video.Total != 1830 || video.ZeroWeeks != 0 {
		t.Errorf("video: got %+v", video)
	}
	if audio.ZeroWeeks != 6 || audio.Total != 5400 || audio.Median != 100 || audio.Min != 0 {
		t.Errorf("audio: got %+v", audio)
	}
	if search.Role != "search" || search.Total != 3840 {
		t.Errorf("search: got %+v", search)
	}
	if want := 1830.0 / 11070; math.Abs(video.Share-want) > 1e-15 {
		t.Errorf("video share: got %v, want %v", video.Share, want)
	}
	if got := s.Columns[5]; got.Name != "price" || got.Role != "controls" || got.Total != 0 {
		t.Errorf("price: got %+v", got)
	}
	// video and search are both linear in t: correlation 1 (closed form).
	if r := s.Correlation[0][2]; math.Abs(r-1) > 1e-12 || s.Correlation[2][0] != r || s.Correlation[1][1] != 1 {
		t.Errorf("correlation video/search: got %v", r)
	}
	// audio spends 100 in 54 of 60 weeks: flat (90% of weeks at one value)
	if len(s.Warnings) != 2 || s.Warnings[0].Kind != KindCollinear || s.Warnings[0].Column != "video,search" ||
		s.Warnings[1].Kind != KindFlat || s.Warnings[1].Column != "audio" {
		t.Errorf("warnings: got %v", s.Warnings)
	}

	var buf bytes.Buffer
	if err := s.WriteText(&buf); err != nil {
		t.Fatal(err)
	}
	text := buf.String()
	for _, want := range []string{
		"File:     data.csv\n",
		"Weeks:    60 (2023-01-02 to 2024-02-19)\n",
		"Regions:  none (national data)\n",
		"zero weeks",
		"16.5%", // 1830 / 11070
		"Correlation of weekly spend:",
		"Warnings: 2\n  collinear: spend on \"video\" and \"search\" is nearly collinear (correlation 1.00)",
		"flat: \"audio\" hardly moves (90% of weeks at 100)",
	} {
		if !strings.Contains(text, want) {
			t.Errorf("text lacks %q:\n%s", want, text)
		}
	}
	// The video row, aligned: name, role, min, median, max, zero weeks, total.
	if !containsFields(text, "video", "upper", "1", "30.50", "60", "0", "1830", "16.5%") {
		t.Errorf("no video row with its figures:\n%s", text)
	}
}

// containsFields reports whether some line of text has exactly these
// space-separated fields.
func containsFields(text string, fields ...string) bool {
	for _, l := range strings.Split(text, "\n") {
		if strings.Join(strings.Fields(l), " ") == strings.Join(fields, " ") {
			return true
		}
	}
	return false
}

func TestSummarizeRegions(t *testing.T) {
	d := mustRead(t, regionFrame(60).csv(), regionSpec)
	s := Summarize(d)
	if len(s.Regions) != 3 || s.Regions[1].Name != "south" || s.Regions[1].Population != 3000 {
		t.Errorf("regions: got %+v", s.Regions)
	}
	var buf bytes.Buffer
	if err := s.WriteText(&buf); err != nil {
		t.Fatal(err)
	}
	// one row per region, columns aligned; totals in the data's units
	text := buf.String()
	if want := "Regions:  3 (fit and run fit them as a region panel; --national fits their national sum)\n\nregion  population   spend  share of spend  queries  outcome\nnorth         1000  150237           22.2%   360243   239730\n"; !strings.Contains(text, want) {
		t.Errorf("text lacks %q:\n%s", want, text)
	}
	lines := strings.Split(text, "\n")
	i := slices.IndexFunc(lines, func(l string) bool { return strings.HasPrefix(l, "region ") })
	if i < 0 || len(lines) < i+4 || !strings.HasPrefix(lines[i+2], "south         3000") || len(lines[i+1]) != len(lines[i]) || len(lines[i+3]) != len(lines[i]) {
		t.Errorf("region table not one aligned row per region:\n%s", text)
	}
	var shares float64
	for _, r := range s.Regions {
		shares += r.Spend
		q := 0.0
		for _, v := range d.Regions[slices.IndexFunc(d.Regions, func(g Region) bool { return g.Name == r.Name })].Queries {
			q += v
		}
		if r.Queries != q {
			t.Errorf("%s: queries total %v, want %v", r.Name, r.Queries, q)
		}
	}
	if math.Abs(shares-s.Columns[0].Total-s.Columns[1].Total-s.Columns[2].Total) > 1e-9*shares {
		t.Errorf("regions' spend %v does not add up to the spend columns' totals", shares)
	}
	// Totals are national: video in week 0 is 1000+2000+1500.
	total := 0.0
	for _, r := range d.Regions {
		for _, v := range r.Upper[0] {
			total += v
		}
	}
	if math.Abs(s.Columns[0].Total-total) > 1e-9*total {
		t.Errorf("video total: got %v, want %v", s.Columns[0].Total, total)
	}
}
