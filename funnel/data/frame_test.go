package data

import (
	"math"
	"slices"
	"strconv"
	"strings"
	"time"
)

// frame is a small CSV table that tests build and corrupt. Cells are strings
// so that any bad input can be written.
type frame struct {
	header []string
	rows   [][]string
}

var frameStart = time.Date(2023, 1, 2, 0, 0, 0, 0, time.UTC)

// baseSpec is the spec of baseFrame (national).
var baseSpec = Spec{Date: "week", Upper: []string{"video", "audio"}, Search: []string{"search"},
	Queries: "queries", Outcome: "sales", Controls: []string{"price"}}

// regionSpec is the spec of regionFrame.
var regionSpec = Spec{Date: "week", Region: "region", Population: "population", Upper: []string{"video", "audio"},
	Search: []string{"search"}, Queries: "queries", Outcome: "sales", Controls: []string{"price"}}

// baseFrame returns a valid national frame of n weeks from 2023-01-02 with
// columns week, video, audio, search, queries, sales, price (file columns 1
// to 7). Data row i is on line i+2. The series are smooth waves of different
// periods, so they raise no warning.
func baseFrame(n int) *frame {
	f := &frame{header: []string{"week", "video", "audio", "search", "queries", "sales", "price"}}
	for t := range n {
		f.rows = append(f.rows, baseRow(t, 1))
	}
	return f
}

func baseRow(t int, scale float64) []string {
	ft := float64(t)
	video := scale * (1000 + 400*math.Sin(2*math.Pi*ft/13) + float64(t%5)*50)
	audio := scale * (500 + 200*math.Cos(2*math.Pi*ft/7) + float64(t%3)*30)
	search := scale * (800 + 150*math.Sin(2*math.Pi*ft/26+1) + float64(t%4)*20)
	queries := scale*5000 + 0.5*video + 0.8*audio + scale*300*math.Sin(2*math.Pi*ft/52)
	sales := scale*2000 + 0.3*queries + 0.2*search + scale*float64(t%6)*10
	price := 9.99 + 0.5*math.Sin(2*math.Pi*ft/17)
	return []string{frameStart.AddDate(0, 0, 7*t).Format(DateLayout), num(video), num(audio), num(search), num(queries), num(sales), num(price)}
}

func num(v float64) string { return strconv.FormatFloat(v, 'f', 2, 64) }

// regionFrame returns a valid frame of n weeks for the regions north
// (population 1000, scale 1), south (3000, scale 2) and west (2000, scale
// 1.5), rows interleaved week by week: the row of week t and region g is
// data row 3t+g, on line 3t+g+2. Columns: week, region, population, video,
// audio, search, queries, sales, price.
func regionFrame(n int) *frame {
	f := &frame{header: []string{"week", "region", "population", "video", "audio", "search", "queries", "sales", "price"}}
	regs := []struct {
		name, pop string
		scale     float64
	}{{"north", "1000", 1}, {"south", "3000", 2}, {"west", "2000", 1.5}}
	for t := range n {
		for g, r := range regs {
			row := baseRow(t, r.scale)
			row[6] = num(9.99 + 0.5*math.Sin(2*math.Pi*float64(t+3*g)/17))
			f.rows = append(f.rows, append([]string{row[0], r.name, r.pop}, row[1:]...))
		}
	}
	return f
}

func (f *frame) col(name string) int {
	j := slices.Index(f.header, name)
	if j < 0 {
		panic("frame: no column " + name)
	}
	return j
}

// set writes v into data row i of column name.
func (f *frame) set(i int, name, v string) *frame {
	f.rows[i][f.col(name)] = v
	return f
}

// setAll writes v into every row of column name.
func (f *frame) setAll(name, v string) *frame {
	for i := range f.rows {
		f.set(i, name, v)
	}
	return f
}

// drop deletes data row i.
func (f *frame) drop(i int) *frame {
	f.rows = slices.Delete(f.rows, i, i+1)
	return f
}

// csv renders the frame with sep between fields and eol after lines. Cells
// containing sep or a quote are quoted.
func (f *frame) csvWith(sep, eol string) string {
	var b strings.Builder
	line := func(cells []string) {
		for j, c := range cells {
			if j > 0 {
				b.WriteString(sep)
			}
			if strings.ContainsAny(c, sep+`"`) && sep == "," {
				c = `"` + strings.ReplaceAll(c, `"`, `""`) + `"`
			}
			b.WriteString(c)
		}
		b.WriteString(eol)
	}
	line(f.header)
	for _, r := range f.rows {
		line(r)
	}
	return b.String()
}

func (f *frame) csv() string { return f.csvWith(",", "\n") }

func baseFrameWeeks(n int) []time.Time {
	w := make([]time.Time, n)
	for t := range w {
		w[t] = frameStart.AddDate(0, 0, 7*t)
	}
	return w
}
