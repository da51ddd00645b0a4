package report_test

import (
	"bytes"
	"encoding/base64"
	"encoding/xml"
	"errors"
	"fmt"
	"image/png"
	"io"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"sync"
	"testing"

	"spillway/funnel/fitfolder"
	"spillway/funnel/fitfolder/fitfoldertest"
	"spillway/funnel/stat"
	"spillway/funnel/window"
	"spillway/plots"
	"spillway/plots/report"
)

type fixture struct {
	fx     *fitfoldertest.Fixture
	f      *fitfolder.Fit
	charts map[string][]byte
}

var (
	fixtures   = map[bool]*fixture{}
	fixturesMu sync.Mutex
	tmpDirs    []string
)

func TestMain(m *testing.M) {
	code := m.Run()
	for _, d := range tmpDirs {
		os.RemoveAll(d)
	}
	os.Exit(code)
}

// load returns a fixture fit (trustworthy unless bad) and its charts,
// built once per test binary.
func load(t *testing.T, bad bool) *fixture {
	t.Helper()
	fixturesMu.Lock()
	defer fixturesMu.Unlock()
	if x, ok := fixtures[bad]; ok {
		return x
	}
	dir, err := os.MkdirTemp("", "spillway-report-")
	if err != nil {
		t.Fatal(err)
	}
	tmpDirs = append(tmpDirs, dir)
	fx, err := fitfoldertest.Write(filepath.Join(dir, "fit"), fitfoldertest.Options{Untrustworthy: bad})
	if err != nil {
		t.Fatal(err)
	}
	f, err := fitfolder.Load(fx.Dir)
	if err != nil {
		t.Fatal(err)
	}
	charts, err := plots.Render(f, "")
	if err != nil {
		t.Fatal(err)
	}
	x := &fixture{fx, f, charts}
	fixtures[bad] = x
	return x
}

func write(t *testing.T, x *fixture, window string) []byte {
	t.Helper()
	var buf bytes.Buffer
	if err := report.Write(&buf, x.f, window, x.charts); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes()
}

// node is an element of the parsed page.
type node struct {
	name     string
	attr     map[string]string
	children []*node
	text     string // character data directly inside, concatenated
}

// parse reads the page with encoding/xml in strict mode (every element
// closed, every attribute quoted, only XML entities): a page that passes
// has balanced tags.
func parse(t *testing.T, b []byte) *node {
	t.Helper()
	d := xml.NewDecoder(bytes.NewReader(b))
	d.Strict = true
	root := &node{name: "#root"}
	stack := []*node{root}
	for {
		tok, err := d.Token()
		if err == io.EOF {
			break
		}
		if err != nil {
			line, _ := d.InputPos()
			t.Fatalf("report does not parse at line %d: %v", line, err)
		}
		switch tk := tok.(type) {
		case xml.StartElement:
			n := &node{name: tk.Name.Local, attr: map[string]string{}}
			for _, a := range tk.Attr {
				n.attr[a.Name.Local] = a.Value
			}
			top := stack[len(stack)-1]
			top.children = append(top.children, n)
			stack = append(stack, n)
		case xml.EndElement:
			if stack[len(stack)-1].name != tk.Name.Local {
				t.Fatalf("unbalanced tags: </%s> closes <%s>", tk.Name.Local, stack[len(stack)-1].name)
			}
			stack = stack[:len(stack)-1]
		case xml.CharData:
			stack[len(stack)-1].text += string(tk)
		}
	}
	if len(stack) != 1 {
		t.Fatalf("unclosed element <%s>", stack[len(stack)-1].name)
	}
	return root
}

func (n *node) walk(fn func(*node)) {
	fn(n)
	for _, c := range n.children {
		c.walk(fn)
	}
}

func (n *node) byID(id string) *node {
	var out *node
	n.walk(func(m *node) {
		if out == nil && m.attr["id"] == id {
			out = m
		}
	})
	return out
}

func (n *node) all(name string) []*node {
	var out []*node
	n.walk(func(m *node) {
		if m.name == name {
			out = append(out, m)
		}
	})
	return out
}

// fullText returns all character data under n.
func (n *node) fullText() string {
	var b strings.Builder
	var rec func(m *node)
	rec = func(m *node) {
		b.WriteString(m.text)
		for _, c := range m.children {
			rec(c)
		}
	}
	rec(n)
	return b.String()
}

func TestReportParsesAndEmbedsCharts(t *testing.T) {
	x := load(t, false)
	b := write(t, x, "")
	root := parse(t, b)
	if len(root.all("html")) != 1 || len(root.all("body")) != 1 {
		t.Fatal("no single html/body element")
	}
	for _, name := range plots.Names {
		fig := root.byID("chart-" + name)
		if fig == nil {
			t.Errorf("no figure for chart %s", name)
			continue
		}
		imgs := fig.all("img")
		if len(imgs) != 1 {
			t.Fatalf("chart %s: %d images", name, len(imgs))
		}
		src := imgs[0].attr["src"]
		const prefix = "data:image/png;base64,"
		if !strings.HasPrefix(src, prefix) {
			t.Fatalf("chart %s: src is not a PNG data URI: %.40q", name, src)
		}
		got, err := base64.StdEncoding.DecodeString(src[len(prefix):])
		if err != nil {
			t.Fatalf("chart %s: %v", name, err)
		}
		if !bytes.Equal(got, x.charts[name]) {
			t.Errorf("chart %s: embedded bytes differ from the chart", name)
		}
		if _, err := png.Decode(bytes.NewReader(got)); err != nil {
			t.Errorf("chart %s: embedded PNG does not decode: %v", name, err)
		}
		if imgs[0].attr["alt"] == "" {
			t.Errorf("chart %s: no alt text", name)
		}
	}
}

// TestReportOffline checks that the page references nothing outside
// itself: no http(s) or protocol-relative URL, no scripts, no linked
// styles or fonts.
func TestReportOffline(t *testing.T) {
	for _, bad := range []bool{false, true} {
		b := write(t, load(t, bad), "")
		low := bytes.ToLower(b)
		for _, s := range []string{"http://", "https://", "<script", "<link", "@import", "url(", "src=\"//", "href=\"//"} {
			if bytes.Contains(low, []byte(s)) {
				i := bytes.Index(low, []byte(s))
				t.Errorf("report contains %q near %q", s, b[max(0, i-40):min(len(b), i+60)])
			}
		}
		root := parse(t, b)
		root.walk(func(n *node) {
			for _, a := range []string{"src", "href"} {
				if v, ok := n.attr[a]; ok && !strings.HasPrefix(v, "data:") && !strings.HasPrefix(v, "#") {
					t.Errorf("<%s %s=%q> points outside the page", n.name, a, v)
				}
			}
		})
	}
}

// TestReportEffectNumbers reads the effect tables back and checks every
// shown number against effects.csv with the report's rounding
// (plots.Number, plots.Percent for the share, per 1,000 of spend).
func TestReportEffectNumbers(t *testing.T) {
	x := load(t, false)
	root := parse(t, write(t, x, ""))
	for _, w := range []string{"2025Q3", "all"} {
		tab := root.byID("effects-" + w)
		if tab == nil {
			t.Fatalf("no effects table for %s", w)
		}
		rows := 0
		for _, tr := range tab.all("tr") {
			if tr.attr["data-path"] == "" {
				continue
			}
			rows++
			if tr.attr["data-window"] != w {
				t.Errorf("row of window %s in table %s", tr.attr["data-window"], w)
			}
			var e fitfolder.Effect
			found := false
			for _, fe := range x.fx.Effects {
				if plots.Channel(fe.Channel) == tr.attr["data-channel"] && fe.Path == tr.attr["data-path"] && fe.Window == w {
					e, found = fe, true
				}
			}
			if !found {
				t.Fatalf("row %v has no effects.csv line", tr.attr)
			}
			tds := tr.all("td")
			if len(tds) != 5 {
				t.Fatalf("row with %d cells", len(tds))
			}
			var mean, interval, per string
			if e.Path == fitfolder.PathMediatedShare {
				mean = plots.Percent(e.Mean)
				interval = plots.Percent(e.Q05) + " to " + plots.Percent(e.Q95)
			} else {
				mean = plots.Number(e.Mean)
				interval = plots.Number(e.Q05) + " to " + plots.Number(e.Q95)
				// The fixture's conversions per unit of spend are about
				// 0.001, so the report shows them per 1,000 of spend.
				per = plots.Number(e.PerUnitSpend * 1000)
			}
			if got := tds[2].fullText(); got != mean {
				t.Errorf("%s %s %s mean: got %q, want %q", w, e.Channel, e.Path, got, mean)
			}
			if got := tds[3].fullText(); got != interval {
				t.Errorf("%s %s %s interval: got %q, want %q", w, e.Channel, e.Path, got, interval)
			}
			if got := tds[4].fullText(); got != per {
				t.Errorf("%s %s %s per spend: got %q, want %q", w, e.Channel, e.Path, got, per)
			}
		}
		want := 0
		for _, e := range x.fx.Effects {
			if e.Window == w {
				want++
			}
		}
		if rows != want {
			t.Errorf("table %s: %d rows, want %d (every effects.csv row of the window)", w, rows, want)
		}
	}
	// Borrowed demand.
	tab := root.byID("borrowed")
	for _, tr := range tab.all("tr") {
		m := tr.attr["data-measure"]
		if m == "" {
			continue
		}
		for _, b := range x.fx.Borrowed {
			if b.Measure != m {
				continue
			}
			want := plots.Number(b.Mean)
			if m == "borrowed_share" {
				want = plots.Percent(b.Mean)
			}
			if got := tr.all("td")[2].fullText(); got != want {
				t.Errorf("borrowed %s: got %q, want %q", m, got, want)
			}
		}
	}
}

// paired computes the change of an effect between two windows from the
// fixture's draws, independently of the report package.
func paired(x *fixture, ch, path, a, b string) (mean, q05, q95 float64) {
	get := func(w string) []float64 {
		if path == fitfolder.PathMediatedShare {
			via := x.fx.Draws[fitfolder.DrawKey{Channel: ch, Path: fitfolder.PathViaSearch, Window: w}]
			tot := x.fx.Draws[fitfolder.DrawKey{Channel: ch, Path: fitfolder.PathTotal, Window: w}]
			s := make([]float64, len(via))
			for i := range via {
				s[i] = via[i] / tot[i]
			}
			return s
		}
		return x.fx.Draws[fitfolder.DrawKey{Channel: ch, Path: path, Window: w}]
	}
	va, vb := get(a), get(b)
	d := make([]float64, len(va))
	for i := range va {
		d[i] = va[i] - vb[i]
		mean += d[i]
	}
	mean /= float64(len(d))
	slices.Sort(d)
	return mean, stat.Quantile(d, 0.05), stat.Quantile(d, 0.95)
}

func TestCompareUsesPairedDraws(t *testing.T) {
	x := load(t, false)
	for _, c := range []struct{ ch, path, a, b string }{
		{"video_spend", "total", "2025Q3", "2025Q2"},
		{"audio_spend", "via_search", "2025Q3", "2024Q3"},
		{"video_spend", "mediated_share", "2025Q3", "2025Q2"},
		{"search_spend", "direct", "2025Q3", "2024Q3"},
	} {
		got, err := report.Compare(x.f, c.ch, c.path, c.a, c.b)
		if err != nil {
			t.Fatal(err)
		}
		m, lo, hi := paired(x, c.ch, c.path, c.a, c.b)
		if math.Abs(got.Mean-m) > 1e-9*math.Max(1, math.Abs(m)) || math.Abs(got.Q05-lo) > 1e-9*math.Max(1, math.Abs(lo)) ||
			math.Abs(got.Q95-hi) > 1e-9*math.Max(1, math.Abs(hi)) {
			t.Errorf("%v: got (%v, %v, %v), want (%v, %v, %v)", c, got.Mean, got.Q05, got.Q95, m, lo, hi)
		}
		if got.Draws != 400 || got.ExcludesZero() != (lo > 0 || hi < 0) {
			t.Errorf("%v: draws %d, excludes zero %v", c, got.Draws, got.ExcludesZero())
		}
		// The paired interval is narrower than the one from the two
		// marginal summaries, because the quarters share the parameters
		// (the fixture draws one scale factor per draw for every quarter).
		if c.path == "total" {
			ea, _ := x.f.Effect(c.ch, c.path, c.a)
			eb, _ := x.f.Effect(c.ch, c.path, c.b)
			if naive := (ea.Q95 - eb.Q05) - (ea.Q05 - eb.Q95); got.Q95-got.Q05 >= naive {
				t.Errorf("%v: paired interval width %v not below the unpaired %v", c, got.Q95-got.Q05, naive)
			}
		}
	}
	if _, err := report.Compare(x.f, "video_spend", "total", "2025Q3", "2019Q1"); err == nil {
		t.Error("Compare with a window without draws: no error")
	}
}

func TestReportCompareTable(t *testing.T) {
	x := load(t, false)
	root := parse(t, write(t, x, "2025Q3"))
	tab := root.byID("compare")
	if tab == nil {
		t.Fatal("no comparison table for a quarter")
	}
	head := tab.all("th")
	var heads []string
	for _, h := range head {
		heads = append(heads, h.fullText())
	}
	for _, w := range []string{"2025Q3", "2025Q2", "2024Q3"} {
		if !slices.Contains(heads, w) {
			t.Errorf("comparison header %v lacks %s", heads, w)
		}
	}
	pathOf := map[string]string{"via branded search": "via_search", "direct": "direct", "total": "total", "share via search": "mediated_share"}
	checked := 0
	for _, tr := range tab.all("tr") {
		tds := tr.all("td")
		if len(tds) != 11 {
			continue
		}
		ch := tds[0].fullText() + "_spend"
		path := pathOf[tds[1].fullText()]
		for _, side := range []struct {
			base       string
			chg, clear int
		}{{"2025Q2", 4, 6}, {"2024Q3", 8, 10}} {
			m, lo, hi := paired(x, ch, path, "2025Q3", side.base)
			want := plots.Signed(m) + " (" + plots.Signed(lo) + " to " + plots.Signed(hi) + ")"
			if path == fitfolder.PathMediatedShare {
				want = plots.Points(m) + " (" + strings.TrimSuffix(plots.Points(lo), " pts") + " to " + plots.Points(hi) + ")"
			}
			if got := tds[side.chg].fullText(); got != want {
				t.Errorf("%s %s vs %s: change %q, want %q", ch, path, side.base, got, want)
			}
			clear := "no"
			if lo > 0 || hi < 0 {
				clear = "yes"
			}
			if got := tds[side.clear].fullText(); got != clear {
				t.Errorf("%s %s vs %s: clear %q, want %q", ch, path, side.base, got, clear)
			}
			checked++
		}
	}
	// Upper channels: 4 paths × 2; paid search: direct only.
	if checked != 2*(2*4+1) {
		t.Errorf("checked %d changes, want 18", checked)
	}
	// A whole-period review has no comparison table.
	if root := parse(t, write(t, x, "all")); root.byID("compare") != nil {
		t.Error("window all: comparison table present")
	}
	// The first quarter has no previous quarter in effects.csv.
	first := string(write(t, x, "2023Q1"))
	if !strings.Contains(first, "2022Q4 is not in effects.csv") {
		t.Error("2023Q1: no note that 2022Q4 is missing")
	}
}

func TestReportVerdict(t *testing.T) {
	bad := write(t, load(t, true), "")
	s := string(bad)
	v := strings.Index(s, `id="verdict"`)
	if v < 0 || !strings.Contains(s[v:v+200], "Not trustworthy") {
		t.Fatal("untrustworthy fit: no verdict section")
	}
	if f := strings.Index(s, `id="findings"`); f < v {
		t.Error("the verdict does not come before the findings")
	}
	for _, r := range []string{"outcome stage: R-hat 1.03 &gt; 1.01 for K2[video_spend]", "outcome stage: 3 divergent transitions"} {
		if !strings.Contains(s, r) {
			t.Errorf("verdict lacks reason %q", r)
		}
	}
	good := string(write(t, load(t, false), ""))
	if strings.Contains(good, "Not trustworthy") || !strings.Contains(good, "Every stage passes") {
		t.Error("trustworthy fit: wrong verdict")
	}
}

func TestReportContent(t *testing.T) {
	x := load(t, false)
	b := write(t, x, "")
	root := parse(t, b)
	text := root.fullText()
	// Headline findings from the numbers.
	share := func(ch string) string {
		e, _ := x.f.Effect(ch, "mediated_share", "2025Q3")
		return plots.Percent(e.Mean)
	}
	for _, want := range []string{
		share("video_spend") + " of video's effect on conversions in 2025Q3 ran through branded search",
		share("audio_spend") + " of audio's effect on conversions in 2025Q3",
		"of paid search's apparent return over the whole period is demand borrowed from video and audio",
		"Video's total effect",
		"sequential ignorability",
		"would reach zero if an unmeasured common cause made the errors of the two stages correlate at rho = 0.45",
		"Audio's via-search effect does not reach zero",
		"Estimates from observational data rest on assumptions that this report names",
		"Before moving a large budget, confirm with a controlled experiment",
		"Intervals are model-based and can be too narrow if the model is misspecified",
		"156 weeks, 2 Jan 2023 – 22 Dec 2025",
	} {
		if !strings.Contains(text, want) {
			t.Errorf("report lacks %q", want)
		}
	}
	// The rerun does the whole job (run, not fit then report) with the
	// window of this page, into a folder that does not exist yet.
	wantCmd := strings.TrimSuffix(x.fx.Command, " --out "+x.fx.Dir) + " --window 2025Q3 --out " + x.fx.Dir + "-rerun"
	if cmd := root.byID("command"); cmd == nil || cmd.fullText() != wantCmd {
		t.Errorf("rerun command: got %v, want %q", cmd, wantCmd)
	}
	if cmd := root.byID("rebuild"); cmd == nil || cmd.fullText() != "spillway report --fit "+x.fx.Dir+" --window 2025Q3 --force" {
		t.Errorf("rebuild command: got %v", cmd)
	}
	// Spend totals per channel from data.csv.
	spend := root.byID("spend")
	for _, ch := range []string{"video_spend", "audio_spend", "search_spend"} {
		sum := 0.0
		for _, v := range x.fx.Columns[ch] {
			sum += v
		}
		ok := false
		for _, tr := range spend.all("tr") {
			tds := tr.all("td")
			if len(tds) > 2 && tds[0].fullText() == plots.Channel(ch) && tds[2].fullText() == plots.Number(sum) {
				ok = true
			}
		}
		if !ok {
			t.Errorf("spend table lacks %s total %s", ch, plots.Number(sum))
		}
	}
	if !strings.Contains(text, "@media print") {
		t.Error("no print styles")
	}
}

func TestReportWindowErrors(t *testing.T) {
	x := load(t, false)
	var buf bytes.Buffer
	err := report.Write(&buf, x.f, "2019Q1", x.charts)
	var we *fitfolder.WindowError
	if !errors.As(err, &we) {
		t.Fatalf("got %v, want a WindowError", err)
	}
	if buf.Len() != 0 {
		t.Error("something was written despite the error")
	}
	// A custom window of effects.csv is reviewed as a range.
	b := write(t, x, fitfoldertest.CustomWindow)
	if !strings.Contains(string(b), "Review: 1 Jul 2024 – 31 Dec 2024") {
		t.Error("custom window: no range title")
	}
	parse(t, b)
}

// TestReportRendersCharts checks that a nil chart map renders the charts.
func TestReportRendersCharts(t *testing.T) {
	x := load(t, false)
	var buf bytes.Buffer
	if err := report.Write(&buf, x.f, "2025Q2", nil); err != nil {
		t.Fatal(err)
	}
	if n := strings.Count(buf.String(), "data:image/png;base64,"); n != len(plots.Names) {
		t.Errorf("%d charts embedded, want %d", n, len(plots.Names))
	}
}

// TestReportPartialQuarter reviews 2025Q4, of which the fixture holds 12
// of 13 weeks: the title and the text name it partial and no change from
// 2025Q3 is called clear without saying so.
func TestReportPartialQuarter(t *testing.T) {
	x := load(t, false)
	text := parse(t, write(t, x, "2025Q4")).fullText()
	for _, want := range []string{
		"Quarterly review: 2025Q4 (Oct–Dec 2025), partial: 12 of 13 weeks",
		"2025Q4 is a partial quarter: the data hold 12 of its 13 weeks",
		"in 2025Q4 (partial: 12 of 13 weeks) ran through branded search",
	} {
		if !strings.Contains(text, want) {
			t.Errorf("report of 2025Q4 lacks %q", want)
		}
	}
	if strings.Contains(text, "so the change is clear") {
		t.Error("a change into a partial quarter is called clear")
	}
	full := parse(t, write(t, x, "2025Q3")).fullText()
	if strings.Contains(full, "partial") {
		t.Error("the report of 2025Q3, a full quarter, says partial")
	}
}

// TestReportSensitivityBenchmark checks the rho that leaving out the
// control would induce, from the fixture's posterior means.
func TestReportSensitivityBenchmark(t *testing.T) {
	x := load(t, false)
	text := parse(t, write(t, x, "")).fullText()
	mean := func(name string) float64 {
		for _, st := range x.f.Stages {
			for _, p := range st.Params {
				if p.Name == name {
					return p.Mean
				}
			}
		}
		t.Fatalf("no parameter %s", name)
		return 0
	}
	pq, py, sq, sy := mean("phi_q[price]"), mean("phi_y[price]"), mean("sigma_q"), mean("sigma_y")
	rho := pq * py / math.Sqrt((sq*sq+pq*pq)*(sy*sy+py*py))
	want := fmt.Sprintf("price, rho = %s", strings.TrimRight(strings.TrimRight(fmt.Sprintf("%.2f", rho), "0"), "."))
	if !strings.Contains(text, want) {
		t.Errorf("report lacks the benchmark %q", want)
	}
	if strings.Contains(text, "below 0.3") || strings.Contains(text, "weak unmeasured") {
		t.Error("the old caution wording is back")
	}
}

// TestReportReturns checks the returns table against returns.csv and the
// spend change beside the effect change in the quarter comparison; a fit
// folder written before returns.csv existed still gives a report, without
// the table.
func TestReportReturns(t *testing.T) {
	x := load(t, false)
	root := parse(t, write(t, x, "2025Q3"))
	tab := root.byID("returns")
	if tab == nil {
		t.Fatal("no returns table")
	}
	k := 1.0
	if strings.Contains(parse(t, write(t, x, "2025Q3")).fullText(), "per 1,000 of spend") {
		k = 1000
	}
	for _, ch := range []string{"video_spend", "audio_spend"} {
		ros, _ := x.f.ReturnMeasure(ch, "2025Q3", "return_on_spend")
		marg, _ := x.f.ReturnMeasure(ch, "all", "marginal_return")
		text := ""
		for _, tr := range tab.all("tr") {
			if tr.fullText() != "" && strings.Contains(tr.fullText(), plots.Channel(ch)) {
				text = tr.fullText()
			}
		}
		for _, want := range []string{plots.Number(ros.Mean * k), plots.Number(marg.Mean * k)} {
			if !strings.Contains(text, want) {
				t.Errorf("%s returns row %q lacks %s", ch, text, want)
			}
		}
	}
	// spend change of video from 2025Q2 to 2025Q3, from data.csv
	w3, _ := window.Parse("2025Q3")
	w2, _ := window.Parse("2025Q2")
	c := x.f.Data.Total("video_spend", w3)/x.f.Data.Total("video_spend", w2) - 1
	want := plots.Percent(c)
	if c > 0 {
		want = "+" + want
	}
	if cmp := root.byID("compare"); cmp == nil || !strings.Contains(cmp.fullText(), want) {
		t.Errorf("compare table lacks video's spend change %s", want)
	}

	// an older fit folder: no returns.csv
	dir := t.TempDir()
	fx, err := fitfoldertest.Write(filepath.Join(dir, "fit"), fitfoldertest.Options{})
	if err != nil {
		t.Fatal(err)
	}
	if err := os.Remove(filepath.Join(fx.Dir, "returns.csv")); err != nil {
		t.Fatal(err)
	}
	f, err := fitfolder.Load(fx.Dir)
	if err != nil {
		t.Fatal(err)
	}
	if f.Returns != nil {
		t.Error("a folder without returns.csv read rows")
	}
	var buf bytes.Buffer
	if err := report.Write(&buf, f, "2025Q3", x.charts); err != nil {
		t.Fatal(err)
	}
	if parse(t, buf.Bytes()).byID("returns") != nil {
		t.Error("a returns table without returns.csv")
	}
}

// TestReportUnsupportedMedia gives the fixture a verdict whose support
// check failed: the reason shows at the top without a "stage" label, the
// notes on what the data cannot tell show under it, and no
// quarter-on-quarter change is called clear.
func TestReportUnsupportedMedia(t *testing.T) {
	x := load(t, false)
	f := *x.f
	f.Verdict = fitfolder.Verdict{Reasons: []fitfolder.Reason{
		{Stage: "support", Text: "media effects are NOT SUPPORTED by the data: test"},
		{Stage: "effect", Text: "note: video_spend's total effect (all): negligible (P = 0.95 that it is under 5% of the outcome in the window)"},
	}}
	var buf bytes.Buffer
	if err := report.Write(&buf, &f, "2025Q3", x.charts); err != nil {
		t.Fatal(err)
	}
	s := buf.String()
	for _, want := range []string{"<li>media effects are NOT SUPPORTED by the data: test</li>", "negligible (P = 0.95"} {
		if !strings.Contains(s, want) {
			t.Errorf("report lacks %q", want)
		}
	}
	if strings.Contains(s, "support stage") || strings.Contains(s, "so the change is clear") || strings.Contains(s, `class="clear"`) {
		t.Error("a change is called clear, or the support line is labelled a stage, though the media effects are not supported")
	}
	if !strings.Contains(s, "no change between quarters is clear") {
		t.Error("no sentence saying that no change is clear")
	}
}

// TestReportImplied checks the table of what the priors assumed: a row per
// priors_implied.csv row with the stated, prior and posterior medians and
// intervals in the row's units, "–" where nothing was stated, the caution
// on a stated prior, and no table (nor caution) without the file.
func TestReportImplied(t *testing.T) {
	x := load(t, false)
	root := parse(t, write(t, x, "2025Q3"))
	tab := root.byID("priors-implied")
	if tab == nil {
		t.Fatal("no priors-implied table")
	}
	var rows []string
	for _, tr := range tab.all("tr") {
		if tr.attr["data-channel"] != "" {
			rows = append(rows, tr.fullText())
		}
	}
	if len(rows) != len(x.f.Implied) || len(rows) != 3 {
		t.Fatalf("%d rows, want one per priors_implied.csv row (%d)", len(rows), len(x.f.Implied))
	}
	for i, r := range x.f.Implied {
		want := []string{plots.Number(r.PostQ50), interval90(r.PostQ05, r.PostQ95), plots.Number(r.PriorQ50), r.Window, "per 1,000 of spend"}
		if r.Stated() {
			want = append(want, plots.Number(r.StatedQ50), interval90(r.StatedQ05, r.StatedQ95))
		} else {
			want = append(want, "–")
		}
		for _, w := range want {
			if !strings.Contains(rows[i], w) {
				t.Errorf("row %d %q lacks %q", i, rows[i], w)
			}
		}
	}
	if c := root.byID("cautions"); c == nil || !strings.Contains(c.fullText(), "A stated prior can dominate weak data") {
		t.Error("no caution on the stated return prior")
	}

	// an older fit folder: no priors_implied.csv
	dir := t.TempDir()
	fx, err := fitfoldertest.Write(filepath.Join(dir, "fit"), fitfoldertest.Options{})
	if err != nil {
		t.Fatal(err)
	}
	if err := os.Remove(filepath.Join(fx.Dir, "priors_implied.csv")); err != nil {
		t.Fatal(err)
	}
	f, err := fitfolder.Load(fx.Dir)
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := report.Write(&buf, f, "2025Q3", x.charts); err != nil {
		t.Fatal(err)
	}
	if p := parse(t, buf.Bytes()); p.byID("priors-implied") != nil || strings.Contains(p.byID("cautions").fullText(), "stated prior") {
		t.Error("a priors-implied table or caution without priors_implied.csv")
	}
}

func interval90(lo, hi float64) string { return plots.Number(lo) + " to " + plots.Number(hi) }
