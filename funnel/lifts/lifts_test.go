package lifts

import (
	"errors"
	"strings"
	"testing"
	"time"

	"spillway/funnel/data"
	"spillway/funnel/model"
	"spillway/funnel/scenario"
)

func demo(t *testing.T) *data.Dataset {
	t.Helper()
	sc, err := scenario.Named("demo", 1, 0, 0)
	if err != nil {
		t.Fatal(err)
	}
	res, err := sc.Simulate()
	if err != nil {
		t.Fatal(err)
	}
	return res.Data
}

// dark returns the first run of at least two weeks without video spend.
func dark(ds *data.Dataset) (string, string) {
	x := ds.Regions[0].Upper[0]
	for i := 1; i < len(x); i++ {
		if x[i-1] == 0 && x[i] == 0 {
			return ds.Weeks[i-1].Format(time.DateOnly), ds.Weeks[i].Format(time.DateOnly)
		}
	}
	panic("no dark weeks")
}

// TestRead checks good rows (both metrics, columns in any order, the
// optional columns absent or empty) and their scaled terms.
func TestRead(t *testing.T) {
	ds := demo(t)
	file := "se,estimate,end,start,channel,metric\n" +
		"120,800,2023-03-27,2023-03-06,video_spend,\n" +
		"3000,15000,2024-06-24,2024-06-03,audio_spend,queries\n" +
		"50,400,2025-01-27,2025-01-06,search_spend,outcome\n"
	tests, err := Read(strings.NewReader(file), "lifts.csv", ds)
	if err != nil {
		t.Fatal(err)
	}
	if len(tests) != 3 {
		t.Fatalf("%d tests, want 3", len(tests))
	}
	a := tests[0]
	if a.Line != 2 || a.Channel != "video_spend" || a.Metric != model.LiftOutcome || a.Estimate != 800 || a.SE != 120 ||
		!a.Start.Equal(ds.Weeks[a.From]) || !a.End.Equal(ds.Weeks[a.To]) || a.To-a.From != 3 || a.From != 9 {
		t.Errorf("first test %+v", a)
	}
	if tests[1].Metric != model.LiftQueries || tests[2].Channel != "search_spend" {
		t.Errorf("tests %+v", tests[1:])
	}
	sc := model.Scale(ds.National(), ds.Spec)
	term := tests[1].Term(sc, 0, 1)
	if term.Estimate != 15000/sc.QueriesScale || term.SE != 3000/sc.QueriesScale || term.Start != tests[1].From || term.End != tests[1].To {
		t.Errorf("queries term %+v", term)
	}
	if term := a.Term(sc, 0, 1); term.Estimate != 800/sc.OutcomeScale {
		t.Errorf("outcome term %+v", term)
	}
}

// TestReadErrors checks that each bad file is an error naming
// FILE:LINE:COLUMN and what was expected.
func TestReadErrors(t *testing.T) {
	ds := demo(t)
	d0, d1 := dark(ds)
	const head = "channel,start,end,estimate,se\n"
	for _, c := range []struct{ file, want string }{
		{"", "lifts.csv:1: empty file"},
		{head, "lifts.csv:1: no lift tests"},
		{"channel,start,end,estimate\n", `lifts.csv:1: no column "se"`},
		{"channel,start,end,estimate,se,week\n", `lifts.csv:1:6: column "week": unknown column`},
		{"channel,start,end,estimate,se,se\n", `lifts.csv:1:6: column "se": column named twice`},
		{head + "radio_spend,2023-03-06,2023-03-27,800,120\n", `lifts.csv:2:1: column "channel": unknown channel "radio_spend"`},
		{head + "video_spend,2023-03-06,2023-03-27,800,120\nvideo_spend,2023-13-06,2023-03-27,800,120\n", `lifts.csv:3:2: column "start": "2023-13-06" is not a date`},
		{head + "video_spend,2023-03-07,2023-03-27,800,120\n", `lifts.csv:2:2: column "start": 2023-03-07 is not a week start of the data (weekly from 2023-01-02 to 2025-12-22)`},
		{head + "video_spend,2023-03-06,2026-03-30,800,120\n", `lifts.csv:2:3: column "end": 2026-03-30 is not a week start`},
		{head + "video_spend,2023-03-27,2023-03-06,800,120\n", `lifts.csv:2:3: column "end": the window ends (2023-03-06) before it starts (2023-03-27)`},
		{head + "video_spend," + d0 + "," + d1 + ",800,120\n", `lifts.csv:2:2: column "start": video_spend has no spend from`},
		{head + "video_spend,2023-03-06,2023-03-27,NaN,120\n", `lifts.csv:2:4: column "estimate": "NaN" is not a finite number`},
		{head + "video_spend,2023-03-06,2023-03-27,800,0\n", `lifts.csv:2:5: column "se": the standard error must be > 0, not 0`},
		{head + "video_spend,2023-03-06,2023-03-27,800,-3\n", `lifts.csv:2:5: column "se": the standard error must be > 0`},
		{head + "video_spend,2023-03-06,2023-03-27,800\n", `lifts.csv:2: 4 fields; the header has 5`},
		{"channel,start,end,estimate,se,metric\nvideo_spend,2023-03-06,2023-03-27,800,120,sales\n", `lifts.csv:2:6: column "metric": unknown metric "sales"`},
		{"channel,start,end,estimate,se,metric\nsearch_spend,2023-03-06,2023-03-27,800,120,queries\n", `lifts.csv:2:6: column "metric": paid search search_spend has no effect on queries`},
		{"channel,start,end,estimate,se,region\nvideo_spend,2023-03-06,2023-03-27,800,120,North\n", `lifts.csv:2:6: column "region": region "North", but the data are national`},
		{head + "video_spend,\"2023-03-06,2023-03-27,800,120\n", `lifts.csv:2:`},
	} {
		_, err := Read(strings.NewReader(c.file), "lifts.csv", ds)
		var de *data.DataError
		if err == nil || !errors.As(err, &de) || !strings.HasPrefix(err.Error(), c.want) {
			t.Errorf("file %q:\n got %v\nwant %s...", c.file, err, c.want)
		}
	}
	if _, err := Load("no/such/lifts.csv", ds); err == nil || !strings.HasPrefix(err.Error(), "no/such/lifts.csv: ") {
		t.Errorf("a missing file: %v", err)
	}
}
