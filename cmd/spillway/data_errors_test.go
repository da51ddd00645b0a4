package main

import (
	"fmt"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"
	"time"
)

// cmdTable is a small CSV table that the tests build and corrupt.
type cmdTable struct {
	header []string
	rows   [][]string
}

// cmdFrame returns a valid national frame of n weeks from 2023-01-02 with
// columns week, video, audio, search, queries, sales, price (file columns 1
// to 7); data row i is on line i+2. Smooth waves of different periods, so it
// raises no warning.
func cmdFrame(n int) *cmdTable {
	f := &cmdTable{header: []string{"week", "video", "audio", "search", "queries", "sales", "price"}}
	for t := range n {
		f.rows = append(f.rows, cmdRow(t, 1))
	}
	return f
}

func cmdRow(t int, scale float64) []string {
	x := float64(t)
	video := scale * (1000 + 400*math.Sin(2*math.Pi*x/13) + float64(t%5)*50)
	audio := scale * (500 + 200*math.Cos(2*math.Pi*x/7) + float64(t%3)*30)
	search := scale * (800 + 150*math.Sin(2*math.Pi*x/26+1) + float64(t%4)*20)
	queries := scale*5000 + 0.5*video + 0.8*audio
	sales := scale*2000 + 0.3*queries + 0.2*search
	price := 9.99 + 0.5*math.Sin(2*math.Pi*x/17)
	f := func(v float64) string { return strconv.FormatFloat(v, 'f', 2, 64) }
	return []string{cmdWeek(t), f(video), f(audio), f(search), f(queries), f(sales), f(price)}
}

func cmdWeek(t int) string {
	return time.Date(2023, 1, 2, 0, 0, 0, 0, time.UTC).AddDate(0, 0, 7*t).Format("2006-01-02")
}

// cmdRegions returns n weeks for regions north (population 1000) and south
// (3000), interleaved: week t of region g is data row 2t+g, on line 2t+g+2.
// Columns: week, region, population, video, audio, search, queries, sales,
// price.
func cmdRegions(n int) *cmdTable {
	f := &cmdTable{header: []string{"week", "region", "population", "video", "audio", "search", "queries", "sales", "price"}}
	for t := range n {
		for g, r := range []string{"north", "south"} {
			row := cmdRow(t, float64(g+1))
			f.rows = append(f.rows, append([]string{row[0], r, strconv.Itoa(1000 + 2000*g)}, row[1:]...))
		}
	}
	return f
}

func (f *cmdTable) set(i int, col, v string) *cmdTable {
	f.rows[i][slices.Index(f.header, col)] = v
	return f
}

func (f *cmdTable) csvWith(sep string) string {
	var b strings.Builder
	for _, r := range append([][]string{f.header}, f.rows...) {
		for j, c := range r {
			if j > 0 {
				b.WriteString(sep)
			}
			if sep == "," && strings.ContainsAny(c, `,"`) {
				c = `"` + strings.ReplaceAll(c, `"`, `""`) + `"`
			}
			b.WriteString(c)
		}
		b.WriteString("\n")
	}
	return b.String()
}

func (f *cmdTable) csv() string { return f.csvWith(",") }

var regionFlags = []string{"--region", "region", "--population", "population"}

// cmdBadInputTests has one case per kind of bad input; loc is the location
// after the file name in the message (":LINE:COLUMN: ", ":LINE: " or ": ").
var cmdBadInputTests = []struct {
	name string
	text func() string
	more []string // flags after inspectArgs' role flags
	loc  string
	want string
}{
	{"empty file", func() string { return "" }, nil, ": ", "the file is empty"},
	{"missing column", func() string { return cmdFrame(60).csv() }, []string{"--upper", "tv"}, ":1: ", `column "tv": not in the header (asked for by --upper)`},
	{"duplicate column", func() string { f := cmdFrame(60); f.header[6] = "audio"; return f.csv() }, nil, ":1:7: ", `column "audio": appears twice in the header (also column 3)`},
	{"non-numeric cell", func() string { return cmdFrame(60).set(12, "video", "12,5").csv() }, nil, ":14:2: ",
		`column "video": "12,5" is not a number; expected a plain decimal like 1250.5`},
	{"NaN", func() string { return cmdFrame(60).set(3, "audio", "NaN").csv() }, nil, ":5:3: ", `column "audio": "NaN" is not a finite number`},
	{"Inf", func() string { return cmdFrame(60).set(3, "queries", "+Inf").csv() }, nil, ":5:5: ", `column "queries": "+Inf" is not a finite number`},
	{"empty cell", func() string { return cmdFrame(60).set(7, "sales", "").csv() }, nil, ":9:6: ", `column "sales": empty cell; expected a number`},
	{"negative spend", func() string { return cmdFrame(60).set(9, "search", "-5").csv() }, nil, ":11:4: ", `column "search": -5 is negative; spend cannot be negative`},
	{"negative queries", func() string { return cmdFrame(60).set(9, "queries", "-1").csv() }, nil, ":11:5: ", `column "queries": -1 is negative; query volume cannot be negative`},
	{"negative outcome", func() string { return cmdFrame(60).set(9, "sales", "-1").csv() }, nil, ":11:6: ", `column "sales": -1 is negative; the outcome cannot be negative`},
	{"bad date", func() string { return cmdFrame(60).set(5, "week", "13/02/2023").csv() }, nil, ":7:1: ", `column "week": "13/02/2023" is not a date; expected YYYY-MM-DD`},
	{"missing week", func() string { f := cmdFrame(60); f.rows = slices.Delete(f.rows, 20, 21); return f.csv() }, nil, ":22:1: ",
		fmt.Sprintf(`column "week": week %s follows %s (line 21) by 14 days; expected consecutive weeks 7 days apart`, cmdWeek(21), cmdWeek(19))},
	{"duplicate week", func() string { return cmdFrame(60).set(20, "week", cmdWeek(19)).csv() }, nil, ":22:1: ",
		fmt.Sprintf(`column "week": week %s appears twice (first on line 21)`, cmdWeek(19))},
	{"unsorted weeks", func() string { f := cmdFrame(60); f.rows[20], f.rows[21] = f.rows[21], f.rows[20]; return f.csv() }, nil, ":23:1: ",
		fmt.Sprintf(`column "week": week %s comes after %s (line 22); expected weeks in increasing order`, cmdWeek(20), cmdWeek(21))},
	{"regions with different weeks", func() string { f := cmdRegions(60); f.rows = f.rows[:len(f.rows)-1]; return f.csv() }, regionFlags,
		fmt.Sprintf(":%d:1: ", 2*58+1+2), fmt.Sprintf(`column "week": region "south" ends on %s but region "north" ends on %s`, cmdWeek(58), cmdWeek(59))},
	{"spend all zero", func() string {
		f := cmdFrame(60)
		for i := range f.rows {
			f.set(i, "video", "0")
		}
		return f.csv()
	}, nil, ":1:2: ", `column "video": spend is zero in every week`},
	{"constant control", func() string {
		f := cmdFrame(60)
		for i := range f.rows {
			f.set(i, "price", "9.99")
		}
		return f.csv()
	}, []string{"--controls", "price"}, ":1:7: ", `column "price": the control has the same value (9.99) in every week`},
	{"fewer than 52 weeks", func() string { return cmdFrame(40).csv() }, nil, ": ", "only 40 weeks (2023-01-02 to 2023-10-02); expected at least 52 weeks"},
	{"non-positive population", func() string { return cmdRegions(60).set(3, "population", "0").csv() }, regionFlags, ":5:3: ",
		`column "population": population 0 is not positive`},
	{"inconsistent population", func() string { return cmdRegions(60).set(5, "population", "2999").csv() }, regionFlags, ":7:3: ",
		`column "population": population 2999 of region "south" differs from 3000 on line 3`},
	{"semicolon separated", func() string { return cmdFrame(60).csvWith(";") }, nil, ":1: ", `looks like ';'-separated; spillway reads comma-separated files`},
	{"tab separated", func() string { return cmdFrame(60).csvWith("\t") }, nil, ":1: ", `looks like tab-separated`},
	{"ragged row", func() string { f := cmdFrame(60); f.rows[15] = f.rows[15][:6]; return f.csv() }, nil, ":17:7: ", `line has 6 fields but the header has 7`},
	{"queries all zero", func() string { return cmdFrame(60).fill("queries", "0").csv() }, nil, ":1:5: ", `column "queries": the branded query volume is zero in every week`},
	{"constant queries", func() string { return cmdFrame(60).fill("queries", "5000").csv() }, nil, ":1:5: ",
		`column "queries": the branded query volume has the same value (5000) in every week`},
	{"constant outcome", func() string { return cmdFrame(60).fill("sales", "2000").csv() }, nil, ":1:6: ", `column "sales": the outcome has the same value (2000) in every week`},
	{"constant queries in one region", func() string {
		f := cmdRegions(60)
		for i := 1; i < len(f.rows); i += 2 {
			f.set(i, "queries", "7")
		}
		return f.csv()
	}, regionFlags, ":1:7: ", `column "queries": the branded query volume has the same value (7) in every week of region "south"`},
	{"huge cell quoted short", func() string { return cmdFrame(60).set(12, "video", strings.Repeat("x", 10<<20)).csv() }, nil, ":14:2: ",
		`column "video": "xxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxx... (10485760 bytes)" is not a number`},
}

// fill sets column col to v in every row.
func (f *cmdTable) fill(col, v string) *cmdTable {
	for i := range f.rows {
		f.set(i, col, v)
	}
	return f
}

// TestBadInput runs each bad input through inspect and through fit (a
// writing command): exit status 2, one message naming FILE:LINE:COLUMN, and
// no output folder (nor temporary folder) left behind.
func TestBadInput(t *testing.T) {
	for _, test := range cmdBadInputTests {
		t.Run(test.name, func(t *testing.T) {
			dir := t.TempDir()
			path := writeFileIn(t, dir, "data.csv", test.text())
			want := "spillway inspect: " + path + test.loc + test.want
			code, out, errs := runCmd(t, inspectArgs(path, test.more...)...)
			// one short line, even when the cell at fault is huge
			if code != exitUsage || out != "" || !strings.HasPrefix(errs, want) || strings.Count(errs, "\n") != 1 || len(errs) > 1000 {
				t.Errorf("inspect: got %d, stdout %q, stderr %q; want 2 and one line starting %q", code, out, errs, want)
			}
			outDir := filepath.Join(dir, "results")
			args := append([]string{"fit", "--quiet", "--out", outDir}, inspectArgs(path, test.more...)[1:]...)
			code, _, errs = runCmd(t, args...)
			if code != exitUsage || !strings.HasPrefix(errs, "spillway fit: "+path+test.loc+test.want) {
				t.Errorf("fit: got %d, stderr %q", code, errs)
			}
			if names := dirNames(t, dir); !slices.Equal(names, []string{"data.csv"}) {
				t.Errorf("fit left %v behind", names)
			}
		})
	}
}

// TestGoodInputWrites checks the success path of the same mechanism.
func TestGoodInputWrites(t *testing.T) {
	dir := t.TempDir()
	path := writeFileIn(t, dir, "data.csv", cmdRegions(60).csv())
	outDir := filepath.Join(dir, "results")
	args := append([]string{"writetest", "--out", outDir}, inspectArgs(path, regionFlags...)[1:]...)
	if code, _, errs := runCmd(t, args...); code != 0 {
		t.Fatalf("got %d: %s", code, errs)
	}
	b, err := os.ReadFile(filepath.Join(outDir, "data", "copy.csv"))
	if err != nil {
		t.Fatal(err)
	}
	// The copy has the roles' columns in spec order and the first row of
	// north (week, region, population, spend at t=0: 1000, 700, 926.22).
	if want := "week,region,population,video,audio,search,queries,sales\n2023-01-02,north,1000,1000,700,926.22,"; !strings.HasPrefix(string(b), want) {
		t.Errorf("copy starts %q, want %q", string(b)[:80], want)
	}
	if names := dirNames(t, dir); !slices.Equal(names, []string{"data.csv", "results"}) {
		t.Errorf("folder holds %v", names)
	}
	// Again without --force: refused before any work, the folder untouched.
	code, _, errs := runCmd(t, args...)
	if want := "spillway writetest: output folder " + outDir + " already exists; use --force to replace it\nRun 'spillway help writetest' for usage.\n"; code != exitUsage || errs != want {
		t.Errorf("second run: got %d %q, want 2 %q", code, errs, want)
	}
	if code, _, errs := runCmd(t, append(args, "--force")...); code != 0 {
		t.Errorf("with --force: got %d %q", code, errs)
	}
	if names := dirNames(t, dir); !slices.Equal(names, []string{"data.csv", "results"}) {
		t.Errorf("after --force the folder holds %v", names)
	}
}

func dirNames(t *testing.T, dir string) []string {
	t.Helper()
	es, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	var names []string
	for _, e := range es {
		names = append(names, e.Name())
	}
	return names
}
