package table

import (
	"bytes"
	"errors"
	"math"
	"strings"
	"testing"
	"time"
)

type row struct {
	Name  string     `csv:"name"`
	Day   Date       `csv:"day"`
	N     Int        `csv:"n"`
	X     Float      `csv:"x"`
	Opt   OptFloat   `csv:"opt"`
	Stat  OptStat    `csv:"stat"`
	Grid  Tenths     `csv:"grid"`
	Share UndefFloat `csv:"share"`
}

// TestRoundTrip writes rows and reads them back: every spelling reads back
// to the value written.
func TestRoundTrip(t *testing.T) {
	day := time.Date(2024, 2, 29, 0, 0, 0, 0, time.UTC)
	in := []row{
		{"a", Date(day), 3, 0.1, OptFloat(math.NaN()), OptStat(math.NaN()), -0.9, 1e-7},
		{"b, quoted", Date(day.AddDate(0, 0, 7)), -1, 123456789.25, 2.5, 1.0004, 0.3, UndefFloat(math.Inf(1))},
		{"c", Date(day), 0, 0, 0, 0, 0, UndefFloat(math.NaN())},
	}
	var b bytes.Buffer
	if err := Write(&b, in); err != nil {
		t.Fatal(err)
	}
	want := "name,day,n,x,opt,stat,grid,share\na,2024-02-29,3,0.1,,NaN,-0.9,1e-07\n\"b, quoted\",2024-03-07,-1,1.2345678925e+08,2.5,1.0004,0.3,+Inf\nc,2024-02-29,0,0,0,0,0.0,NaN\n"
	if b.String() != want {
		t.Fatalf("written:\n%s\nwant:\n%s", b.String(), want)
	}
	var out []row
	lines, err := Read(strings.NewReader(b.String()), "t.csv", &out, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if len(out) != 3 || lines[0] != 2 || lines[1] != 3 {
		t.Fatalf("got %d rows on lines %v", len(out), lines)
	}
	if out[0].Name != "a" || !time.Time(out[0].Day).Equal(day) || out[0].X != 0.1 || !math.IsNaN(float64(out[0].Opt)) ||
		!math.IsNaN(float64(out[0].Stat)) || out[0].Grid != -0.9 || out[1].N != -1 || out[1].Name != "b, quoted" ||
		!math.IsNaN(float64(out[1].Share)) || !math.IsNaN(float64(out[2].Share)) {
		t.Errorf("read back %+v", out)
	}
}

// TestErrors checks that every problem names the line and the column, also
// after a quoted cell that spans lines.
func TestErrors(t *testing.T) {
	const head = "name,day,n,x,opt,stat,grid,share\n"
	for _, c := range []struct {
		text, want, column string
		exact              bool
	}{
		{"", "t.csv:1: empty file; expected the header name,day", "", false},
		{"name,day,n,x,opt,stat,grid\n", "t.csv:1: missing column (header has name,day,n,x,opt,stat,grid)", "share", false},
		{"name,day,n,x,opt,stat,grid,share,name\n", "t.csv:1:9: duplicate column", "name", false},
		{"day,name,n,x,opt,stat,grid,share\n", "t.csv:1:1: header column 1 is \"day\"; expected \"name\"", "day", true},
		{"name,day,n,x,opt,stat,grid,share,extra\n", "t.csv:1: header has 9 columns", "", true},
		{head + "\"a\nb\",2024-01-01,1,1,1,1,1,1\nc,2024-01-01,1,abc,1,1,1,1\n", "t.csv:4:4: \"abc\" is not a finite number", "x", false},
		{head + "a,2024-01-01,1,,1,1,1,1\n", "t.csv:2:4: empty cell, expected a number", "x", false},
		{head + "a,2024-1-01,1,1,1,1,1,1\n", "t.csv:2:2: \"2024-1-01\" is not a date YYYY-MM-DD", "day", false},
		{head + "a,2024-01-01,1.5,1,1,1,1,1\n", "t.csv:2:3: \"1.5\" is not an integer", "n", false},
		{head + "a,2024-01-01,1,1,1,1,1,\n", "t.csv:2:8: empty cell", "share", false},
		{head + "a,2024-01-01,1,1\n", "t.csv:2: row has 4 fields; expected 8", "", false},
		{head + "a,\"b\n", "t.csv:2:", "", false},
	} {
		var out []row
		_, err := Read(strings.NewReader(c.text), "t.csv", &out, Options{Exact: c.exact})
		var te *Error
		if !errors.As(err, &te) || !strings.HasPrefix(err.Error(), c.want) || te.Column != c.column {
			t.Errorf("%q: got %v (column %q), want prefix %q, column %q", c.text, err, func() string {
				if te != nil {
					return te.Column
				}
				return ""
			}(), c.want, c.column)
		}
	}
	var out []row
	if _, err := Read(strings.NewReader("\ufeff name ,day,n,x,opt,stat,grid,share,more\n x ,2024-01-01, 2.0 ,1,NA,,1,nan,whatever\n"), "t.csv", &out, Options{}); err != nil || out[0].Name != "x" || out[0].N != 2 || !math.IsNaN(float64(out[0].Stat)) {
		t.Errorf("spaces, BOM, extra column, NA: got %+v, %v", out, err)
	}
}
