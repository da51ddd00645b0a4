package data

import (
	"errors"
	"fmt"
	"reflect"
	"slices"
	"strings"
	"testing"
)

// wk returns the date of week t of the test frames.
func wk(t int) string { return frameStart.AddDate(0, 0, 7*t).Format(DateLayout) }

// badInputTests lists one case per kind of bad input. Line and column are
// those of the frames in frame_test.go (data row i on line i+2; national
// columns week=1 video=2 audio=3 search=4 queries=5 sales=6 price=7;
// regional columns week=1 region=2 population=3 video=4 ... price=9).
var badInputTests = []struct {
	name      string
	text      func() string
	spec      Spec
	line, col int
	want      string // substring of Error()
}{
	{"empty file", func() string { return "" }, baseSpec, 0, 0, "the file is empty; expected a header line"},
	{"blank file", func() string { return "\n  \r\n\n" }, baseSpec, 0, 0, "the file is empty"},
	{"header only", func() string { f := baseFrame(0); return f.csv() }, baseSpec, 0, 0, "the file has a header but no data rows"},
	{"missing column", func() string { return baseFrame(60).csv() },
		withSpec(func(s *Spec) { s.Upper = []string{"video", "tv"} }), 1, 0,
		`column "tv": not in the header (asked for by --upper); the header has "week", "video", "audio"`},
	{"missing column near miss", func() string { return baseFrame(60).csv() },
		withSpec(func(s *Spec) { s.Queries = "Queries" }), 1, 0, `column "Queries": not in the header (asked for by --queries) (did you mean "queries"?)`},
	{"duplicate column", func() string { f := baseFrame(60); f.header[6] = "video"; return f.csv() },
		withSpec(func(s *Spec) { s.Controls = nil }), 1, 7, `column "video": appears twice in the header (also column 2); expected unique column names`},
	{"non-numeric cell", func() string { return baseFrame(60).set(12, "video", "12,5").csv() }, baseSpec, 14, 2,
		`data.csv:14:2: column "video": "12,5" is not a number; expected a plain decimal like 1250.5`},
	{"hex number", func() string { return baseFrame(60).set(0, "price", "0x1p3").csv() }, baseSpec, 2, 7, `"0x1p3" is not a number`},
	{"currency sign", func() string { return baseFrame(60).set(40, "search", "$800").csv() }, baseSpec, 42, 4, `"$800" is not a number`},
	{"NaN", func() string { return baseFrame(60).set(3, "audio", "NaN").csv() }, baseSpec, 5, 3,
		`column "audio": "NaN" is not a finite number; expected a plain decimal like 1250.5`},
	{"Inf", func() string { return baseFrame(60).set(4, "search", "-Inf").csv() }, baseSpec, 6, 4, `"-Inf" is not a finite number`},
	{"overflow", func() string { return baseFrame(60).set(4, "queries", "1e999").csv() }, baseSpec, 6, 5, `"1e999" is out of range`},
	{"missing-value marker", func() string { return baseFrame(60).set(9, "queries", "NA").csv() }, baseSpec, 11, 5,
		`"NA" marks a missing value; expected a number in every week`},
	{"empty cell", func() string { return baseFrame(60).set(7, "sales", "").csv() }, baseSpec, 9, 6,
		`column "sales": empty cell; expected a number`},
	{"empty spend cell", func() string { return baseFrame(60).set(7, "video", " ").csv() }, baseSpec, 9, 2,
		`empty cell; expected a number (write 0 for a week without spend)`},
	{"negative upper spend", func() string { return baseFrame(60).set(9, "video", "-5").csv() }, baseSpec, 11, 2,
		`column "video": -5 is negative; spend cannot be negative`},
	{"negative search spend", func() string { return baseFrame(60).set(10, "search", "-0.5").csv() }, baseSpec, 12, 4,
		`column "search": -0.5 is negative; spend cannot be negative`},
	{"negative queries", func() string { return baseFrame(60).set(11, "queries", "-1").csv() }, baseSpec, 13, 5,
		`-1 is negative; query volume cannot be negative`},
	{"negative outcome", func() string { return baseFrame(60).set(12, "sales", "-2e3").csv() }, baseSpec, 14, 6,
		`-2e3 is negative; the outcome cannot be negative`},
	{"bad date separator", func() string { return baseFrame(60).set(5, "week", "2023/02/06").csv() }, baseSpec, 7, 1,
		`column "week": "2023/02/06" is not a date; expected YYYY-MM-DD, like 2024-01-01`},
	{"bad date day first", func() string { return baseFrame(60).set(5, "week", "06-02-2023").csv() }, baseSpec, 7, 1, `"06-02-2023" is not a date`},
	{"impossible date", func() string { return baseFrame(60).set(5, "week", "2023-02-30").csv() }, baseSpec, 7, 1, `"2023-02-30" is not a date`},
	{"empty date", func() string { return baseFrame(60).set(5, "week", "").csv() }, baseSpec, 7, 1, `empty cell; expected a week start date`},
	{"missing week", func() string { return baseFrame(60).drop(20).csv() }, baseSpec, 22, 1,
		fmt.Sprintf(`week %s follows %s (line 21) by 14 days; expected consecutive weeks 7 days apart (1 missing, from %s)`, wk(21), wk(19), wk(20))},
	{"not a 7-day step", func() string { return baseFrame(60).set(30, "week", "2023-08-01").csv() }, baseSpec, 32, 1,
		fmt.Sprintf(`week 2023-08-01 follows %s (line 31) by 8 days`, wk(29))},
	{"duplicate week", func() string { return baseFrame(60).set(20, "week", wk(19)).csv() }, baseSpec, 22, 1,
		fmt.Sprintf(`week %s appears twice (first on line 21); expected one row per week`, wk(19))},
	{"unsorted weeks", func() string {
		f := baseFrame(60)
		f.rows[20], f.rows[21] = f.rows[21], f.rows[20]
		return f.csv()
	}, baseSpec, 23, 1, fmt.Sprintf(`week %s comes after %s (line 22); expected weeks in increasing order`, wk(20), wk(21))},
	{"newest first", func() string { f := baseFrame(60); slices.Reverse(f.rows); return f.csv() }, baseSpec, 3, 1,
		`(the file runs newest first; sort it by date, oldest first)`},
	{"spend all zero", func() string { return baseFrame(60).setAll("audio", "0").csv() }, baseSpec, 1, 3,
		`data.csv:1:3: column "audio": spend is zero in every week; a channel without spend cannot be estimated; drop it from --upper`},
	{"search spend all zero", func() string { return baseFrame(60).setAll("search", "0.0").csv() }, baseSpec, 1, 4, `drop it from --search`},
	{"constant control", func() string { return baseFrame(60).setAll("price", "4.5").csv() }, baseSpec, 1, 7,
		`column "price": the control has the same value (4.5) in every week; a constant control cannot be told apart from the baseline`},
	{"fewer than 52 weeks", func() string { return baseFrame(30).csv() }, baseSpec, 0, 0,
		`data.csv: only 30 weeks (2023-01-02 to 2023-07-24); expected at least 52 weeks`},
	{"51 weeks", func() string { return baseFrame(51).csv() }, baseSpec, 0, 0, `only 51 weeks`},
	{"semicolon separated", func() string { return baseFrame(60).csvWith(";", "\n") }, baseSpec, 1, 0,
		`data.csv:1: looks like ';'-separated; spillway reads comma-separated files`},
	{"tab separated", func() string { return baseFrame(60).csvWith("\t", "\r\n") }, baseSpec, 1, 0, `looks like tab-separated`},
	{"ragged row, extra field", func() string { f := baseFrame(60); f.rows[15] = append(f.rows[15], "1"); return f.csv() }, baseSpec, 17, 8,
		`line has 8 fields but the header has 7; expected 7 comma-separated fields on every line`},
	{"ragged row, missing field", func() string { f := baseFrame(60); f.rows[16] = f.rows[16][:5]; return f.csv() }, baseSpec, 18, 6,
		`line has 5 fields but the header has 7`},
	{"bare quote", func() string {
		return strings.Replace(baseFrame(60).set(8, "audio", "QUOTE").csv(), "QUOTE", `12"5`, 1)
	}, baseSpec, 10, 3,
		`a quote (") inside an unquoted field`},
	{"text after closing quote", func() string {
		return strings.Replace(baseFrame(60).set(8, "search", "QUOTE").csv(), "QUOTE", `"12"5`, 1)
	}, baseSpec, 10, 4, `a quoted field is not closed properly`},
	{"UTF-16", func() string { return "\xff\xfew\x00e\x00e\x00k\x00" }, baseSpec, 0, 0, `the file is UTF-16 text; expected UTF-8`},
	{"old Mac line ends", func() string { return baseFrame(60).csvWith(",", "\r") }, baseSpec, 1, 0, `bare carriage return`},

	{"values overflow when added", func() string { return baseFrame(60).set(3, "queries", "1e308").set(4, "queries", "1e308").csv() }, baseSpec, 1, 5,
		`column "queries": the values are too large to add up`},

	// Regions.
	{"region starts later", func() string { return regionFrame(60).drop(1).csv() }, regionSpec, 5, 1,
		`region "south" starts on 2023-01-09 but region "north" starts on 2023-01-02; expected every region to cover the same weeks`},
	{"region ends earlier", func() string { return regionFrame(60).drop(3*59 + 1).csv() }, regionSpec, 3*58 + 1 + 2, 1,
		fmt.Sprintf(`region "south" ends on %s but region "north" ends on %s`, wk(58), wk(59))},
	{"region missing week", func() string { return regionFrame(60).drop(3*30 + 1).csv() }, regionSpec, 3*31 + 1 + 1, 1,
		fmt.Sprintf(`week %s of region "south" follows %s (line %d) by 14 days`, wk(31), wk(29), 3*29+1+2)},
	{"region duplicate week", func() string { return regionFrame(60).set(3*10+1, "week", wk(9)).csv() }, regionSpec, 3*10 + 1 + 2, 1,
		fmt.Sprintf(`week %s of region "south" appears twice (first on line %d)`, wk(9), 3*9+1+2)},
	{"regional file read as national", func() string { return regionFrame(60).csv() }, baseSpec, 3, 1,
		`appears twice (first on line 2); expected one row per week (if the file has one row per region and week, name the region column with --region)`},
	{"empty region", func() string { return regionFrame(60).set(5, "region", "").csv() }, regionSpec, 7, 2,
		`column "region": empty cell; expected a region name`},
	{"population zero", func() string { return regionFrame(60).set(4, "population", "0").csv() }, regionSpec, 6, 3,
		`column "population": population 0 is not positive`},
	{"population negative", func() string { return regionFrame(60).set(4, "population", "-10").csv() }, regionSpec, 6, 3,
		`population -10 is not positive`},
	{"population inconsistent", func() string { return regionFrame(60).set(7, "population", "3100").csv() }, regionSpec, 9, 3,
		`population 3100 of region "south" differs from 3000 on line 3; expected the same population in every row of a region`},
	{"control constant in one region", func() string {
		f := regionFrame(60)
		for t := range 60 {
			f.set(3*t+2, "price", "7")
		}
		return f.csv()
	}, regionSpec, 1, 9, `column "price": the control has the same value (7) in every week of region "west"`},
	{"control constant nationally", func() string {
		// Population-weighted (1000, 3000, 2000) mean of 10+3s, 10-s+2u and
		// 10-3u is 10 in every week (by hand).
		f := regionFrame(60)
		for t := range 60 {
			s, u := float64(t%3-1), float64(t%2)
			f.set(3*t, "price", num(10+3*s)).set(3*t+1, "price", num(10-s+2*u)).set(3*t+2, "price", num(10-3*u))
		}
		return f.csv()
	}, regionSpec, 1, 9, `column "price": the control's national mean (10) is the same in every week`},

	// The spec itself.
	{"no queries role", func() string { return baseFrame(60).csv() }, withSpec(func(s *Spec) { s.Queries = "" }), 0, 0,
		`no branded query volume column: name it with --queries (or "queries" in the spec file)`},
	{"column in two roles", func() string { return baseFrame(60).csv() }, withSpec(func(s *Spec) { s.Search = []string{"video"} }), 0, 0,
		`column "video" is given to both --upper and --search; a column can play only one role`},
}

func withSpec(edit func(*Spec)) Spec {
	s := baseSpec
	s.Upper = slices.Clone(s.Upper)
	edit(&s)
	return s
}

func TestReadBadInput(t *testing.T) {
	for _, test := range badInputTests {
		t.Run(test.name, func(t *testing.T) {
			_, err := Read(strings.NewReader(test.text()), "data.csv", test.spec)
			if err == nil {
				t.Fatalf("got no error, want %q", test.want)
			}
			var de *DataError
			if !errors.As(err, &de) {
				t.Fatalf("got %T %v, want a *DataError", err, err)
			}
			if de.Line != test.line || de.Column != test.col {
				t.Errorf("got line %d column %d, want line %d column %d (%v)", de.Line, de.Column, test.line, test.col, err)
			}
			msg := err.Error()
			if !strings.Contains(msg, test.want) {
				t.Errorf("got %q, want it to contain %q", msg, test.want)
			}
			if de.File != "" {
				if want := locPrefix("data.csv", test.line, test.col); !strings.HasPrefix(msg, want) {
					t.Errorf("got %q, want prefix %q", msg, want)
				}
			}
		})
	}
}

func locPrefix(file string, line, col int) string {
	switch {
	case line == 0:
		return file + ": "
	case col == 0:
		return fmt.Sprintf("%s:%d: ", file, line)
	}
	return fmt.Sprintf("%s:%d:%d: ", file, line, col)
}

func TestDataErrorFormat(t *testing.T) {
	cause := errors.New("bad")
	tests := []struct {
		e    DataError
		want string
	}{
		{DataError{File: "a.csv", Line: 3, Column: 2, Header: "x", Err: cause}, `a.csv:3:2: column "x": bad`},
		{DataError{File: "a.csv", Line: 3, Err: cause}, `a.csv:3: bad`},
		{DataError{File: "a.csv", Err: cause}, `a.csv: bad`},
		{DataError{Line: 4, Column: 1, Err: cause}, `line 4, column 1: bad`},
		{DataError{Err: cause}, `bad`},
	}
	for _, test := range tests {
		if got := test.e.Error(); got != test.want {
			t.Errorf("got %q, want %q", got, test.want)
		}
		if !errors.Is(&test.e, cause) {
			t.Errorf("%q does not unwrap to its cause", test.want)
		}
	}
}

// mustRead reads text with spec and fails the test on error.
func mustRead(t *testing.T, text string, spec Spec) *Dataset {
	t.Helper()
	d, err := Read(strings.NewReader(text), "data.csv", spec)
	if err != nil {
		t.Fatalf("Read: %v", err)
	}
	checkInvariants(t, d)
	return d
}

func TestReadValues(t *testing.T) {
	f := baseFrame(60)
	d := mustRead(t, f.csv(), baseSpec)
	if len(d.Regions) != 1 || d.Regions[0].Name != "" || d.Regions[0].Population != 0 {
		t.Fatalf("got regions %+v, want one national region", d.Regions)
	}
	if len(d.Weeks) != 60 || d.Weeks[0].Format(DateLayout) != "2023-01-02" || d.Weeks[59].Format(DateLayout) != wk(59) {
		t.Errorf("got %d weeks from %v to %v", len(d.Weeks), d.Weeks[0], d.Weeks[len(d.Weeks)-1])
	}
	r := d.Regions[0]
	// Row 10 as written by baseRow (the frame's own text is the reference).
	row := f.rows[10]
	got := []string{num(r.Upper[0][10]), num(r.Upper[1][10]), num(r.Search[0][10]), num(r.Queries[10]), num(r.Outcome[10]), num(r.Controls[0][10])}
	if !slices.Equal(got, row[1:]) {
		t.Errorf("row 10: got %v, want %v", got, row[1:])
	}
	if len(d.Warnings) != 0 {
		t.Errorf("the base frame raised warnings: %v", d.Warnings)
	}
}

func TestReadAccepts(t *testing.T) {
	base := mustRead(t, baseFrame(60).csv(), baseSpec)
	tests := []struct {
		name string
		text string
	}{
		{"CRLF", baseFrame(60).csvWith(",", "\r\n")},
		{"BOM", "\ufeff" + baseFrame(60).csv()},
		{"BOM and CRLF", "\ufeff" + baseFrame(60).csvWith(",", "\r\n")},
		{"no final newline", strings.TrimSuffix(baseFrame(60).csv(), "\n")},
		{"blank lines and empty rows", strings.Replace(baseFrame(60).csv(), "\n", "\n\n", 5) + ",,,,,,\n , ,,,,,\n"},
		{"spaces around cells", strings.ReplaceAll(baseFrame(60).csv(), ",", " , ")},
		{"quoted cells", quoteAll(baseFrame(60))},
		{"other columns and order", func() string {
			f := baseFrame(60)
			f.header = append([]string{"note"}, f.header...)
			for i := range f.rows {
				f.rows[i] = append([]string{"text, with comma"}, f.rows[i]...)
			}
			// Swap the sales and video columns.
			for _, r := range append([][]string{f.header}, f.rows...) {
				r[2], r[6] = r[6], r[2]
			}
			return f.csv()
		}()},
	}
	for _, test := range tests {
		d := mustRead(t, test.text, baseSpec)
		if !reflect.DeepEqual(d.Regions, base.Regions) || !reflect.DeepEqual(d.Weeks, base.Weeks) {
			t.Errorf("%s: the dataset differs from the plain file's", test.name)
		}
	}
	if d := mustRead(t, baseFrame(52).csv(), baseSpec); len(d.Weeks) != 52 {
		t.Errorf("52 weeks: got %d", len(d.Weeks))
	}
}

func quoteAll(f *frame) string {
	var b strings.Builder
	for _, r := range append([][]string{f.header}, f.rows...) {
		for j, c := range r {
			if j > 0 {
				b.WriteByte(',')
			}
			b.WriteString(`"` + c + `"`)
		}
		b.WriteByte('\n')
	}
	return b.String()
}

func TestReadRegions(t *testing.T) {
	f := regionFrame(60)
	d := mustRead(t, f.csv(), regionSpec)
	names := []string{}
	for _, r := range d.Regions {
		names = append(names, r.Name)
	}
	if !slices.Equal(names, []string{"north", "south", "west"}) {
		t.Fatalf("got regions %v", names)
	}
	if d.Regions[1].Population != 3000 {
		t.Errorf("south population: got %v, want 3000", d.Regions[1].Population)
	}
	// Week 7 of west is data row 3*7+2 of the frame.
	if got, want := num(d.Regions[2].Upper[0][7]), f.rows[3*7+2][f.col("video")]; got != want {
		t.Errorf("west video week 7: got %s, want %s", got, want)
	}
	// The same rows region by region give the same dataset.
	g := &frame{header: f.header}
	for reg := range 3 {
		for t := range 60 {
			g.rows = append(g.rows, f.rows[3*t+reg])
		}
	}
	if e := mustRead(t, g.csv(), regionSpec); !reflect.DeepEqual(e.Regions, d.Regions) {
		t.Error("region-by-region rows give another dataset than interleaved rows")
	}
}

func TestNational(t *testing.T) {
	d := mustRead(t, regionFrame(60).csv(), regionSpec)
	nat := d.National()
	pops := []float64{1000, 3000, 2000}
	for _, wkIdx := range []int{0, 17, 59} {
		var video, queries, sales, price float64
		for g, r := range d.Regions {
			video += r.Upper[0][wkIdx]
			queries += r.Queries[wkIdx]
			sales += r.Outcome[wkIdx]
			price += pops[g] * r.Controls[0][wkIdx]
		}
		price /= 6000
		if nat.Upper[0][wkIdx] != video || nat.Queries[wkIdx] != queries || nat.Outcome[wkIdx] != sales {
			t.Errorf("week %d: national sums differ from the regions' sums", wkIdx)
		}
		if d := nat.Controls[0][wkIdx] - price; d > 1e-12 || d < -1e-12 {
			t.Errorf("week %d: national price %v, want population-weighted mean %v", wkIdx, nat.Controls[0][wkIdx], price)
		}
	}
	// Spot check against the frame's own generator: national video in week
	// 0 is 1000*(1+2+1.5) plus t%5 terms (zero at t=0), sin(0)=0: 4500.
	if nat.Upper[0][0] != 4500 {
		t.Errorf("national video week 0: got %v, want 4500 (closed form)", nat.Upper[0][0])
	}
	// Without population the controls' mean is plain.
	spec := regionSpec
	spec.Population = ""
	d = mustRead(t, regionFrame(60).csv(), spec)
	nat = d.National()
	want := (d.Regions[0].Controls[0][5] + d.Regions[1].Controls[0][5] + d.Regions[2].Controls[0][5]) / 3
	if got := nat.Controls[0][5]; got-want > 1e-12 || want-got > 1e-12 {
		t.Errorf("plain mean price: got %v, want %v", got, want)
	}
	// National data: National is a copy of the region.
	nd := mustRead(t, baseFrame(60).csv(), baseSpec)
	ns := nd.National()
	if !reflect.DeepEqual(ns, nd.Regions[0].Series) {
		t.Error("National of national data differs from its region")
	}
	ns.Upper[0][0] = -1
	if nd.Regions[0].Upper[0][0] == -1 {
		t.Error("National shares memory with the dataset")
	}
}
