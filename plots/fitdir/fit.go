package fitdir

import (
	"bufio"
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"slices"
	"sort"
	"strings"
	"time"
)

// Spec is the role of each data column, as in spec.json's "spec" object.
type Spec struct {
	Data       string   `json:"data"`
	Date       string   `json:"date"`
	Region     string   `json:"region"`
	Population string   `json:"population"`
	Upper      []string `json:"upper"`
	Search     []string `json:"search"`
	Queries    string   `json:"queries"`
	Outcome    string   `json:"outcome"`
	Controls   []string `json:"controls"`
}

// Run is spec.json: the spec and the sampler settings of the fit, and the
// command line that reruns it.
type Run struct {
	Spec     Spec        `json:"spec"`
	Seed     json.Number `json:"seed"`
	Chains   int         `json:"chains"`
	Warmup   int         `json:"warmup"`
	Draws    int         `json:"draws"`
	Command  string      `json:"command"`
	DataFile string      `json:"data_file"`
}

// Data is data.csv restricted to the columns the spec names. Rows keep the
// file's order; with a region column there are several rows per week.
type Data struct {
	// Date is each row's week start.
	Date []time.Time
	// Region is each row's region, nil for a national series.
	Region []string
	// Values maps each numeric column the spec names to its per-row values.
	Values map[string][]float64
	// Weeks are the distinct week starts in increasing order.
	Weeks []time.Time
}

// Total returns the sum of column col over the rows whose week is in w
// (all regions). It panics if col is not a column of d.
func (d *Data) Total(col string, w Window) float64 {
	v, ok := d.Values[col]
	if !ok {
		panic("fitdir: unknown data column " + col)
	}
	s := 0.0
	for i, t := range d.Date {
		if w.Contains(t) {
			s += v[i]
		}
	}
	return s
}

// WeeksIn returns the number of distinct weeks of d that belong to w.
func (d *Data) WeeksIn(w Window) int {
	n := 0
	for _, t := range d.Weeks {
		if w.Contains(t) {
			n++
		}
	}
	return n
}

// Param is one row of a stage's summary.csv: the posterior summary of one
// parameter on its natural scale. Rhat and the ESS values are NaN when the
// file leaves them empty (NA).
type Param struct {
	Name             string
	Mean, SD         float64
	Q05, Q50, Q95    float64
	Rhat             float64
	ESSBulk, ESSTail float64
	MCSEMean         float64
}

// Stats is a stage's stats.json: the sampler's cost and health, one entry
// per chain in each slice.
type Stats struct {
	WallSeconds         float64   `json:"wall_seconds"`
	WarmupSeconds       []float64 `json:"warmup_seconds"`
	SamplingSeconds     []float64 `json:"sampling_seconds"`
	GradientEvaluations []int64   `json:"gradient_evaluations"`
	Divergences         []int     `json:"divergences"`
	TreedepthHits       []int     `json:"treedepth_hits"`
	StepSize            []float64 `json:"step_size"`
	MeanLeapfrogs       []float64 `json:"mean_leapfrogs"`
	EBFMI               []float64 `json:"ebfmi"`
}

// TotalDivergences returns the divergent transitions summed over chains.
func (s Stats) TotalDivergences() int {
	n := 0
	for _, d := range s.Divergences {
		n += d
	}
	return n
}

// Stage is one fitted model stage: "demand", "outcome" or "naive".
type Stage struct {
	Name   string
	Params []Param
	Stats  Stats
}

// StageNames are the stage folders of a fit, in the order Fit.Stages holds
// them.
var StageNames = []string{"demand", "outcome", "naive"}

// Reason is one line of verdict.txt after the first: Stage is the prefix
// before the colon ("outcome"), Text the rest. A line without a stage
// prefix has an empty Stage.
type Reason struct {
	Stage, Text string
}

// Verdict is verdict.txt.
type Verdict struct {
	Trustworthy bool
	Reasons     []Reason
}

// Effect is one row of effects.csv. Values are in outcome units summed over
// the window, except for the path "mediated_share", a fraction in 0..1.
// PerUnitSpend is the path's effect per unit of the channel's spend in the
// window, NaN when empty. A value the file gives as NaN, NA or an infinity
// (undefined, e.g. a share in a window without spend) is NaN.
type Effect struct {
	Channel, Path, Window string
	Mean, Q05, Q50, Q95   float64
	PerUnitSpend          float64
}

// Paths of effects.csv.
const (
	PathDirect        = "direct"
	PathViaSearch     = "via_search"
	PathTotal         = "total"
	PathMediatedShare = "mediated_share"
)

// DrawKey names one series of effect_draws.csv.
type DrawKey struct {
	Channel, Path, Window string
}

// DrawSeries is the posterior draws of one effect: Draw holds the .draw
// numbers in increasing order and Value the matching values (outcome units
// over the window).
type DrawSeries struct {
	Draw  []int
	Value []float64
}

// Borrowed is one row of borrowed.csv. Measure is "controlled",
// "apparent", "naive" (outcome units over the whole period) or
// "borrowed_share" (a fraction 0..1).
type Borrowed struct {
	Channel, Measure    string
	Mean, Q05, Q50, Q95 float64
}

// Weekly is one row of weekly.csv: a channel's contribution through one
// path in one week, in outcome units.
type Weekly struct {
	Week           time.Time
	Channel, Path  string
	Mean, Q05, Q95 float64
}

// Sensitivity is one row of sensitivity.csv: the via-search effect (outcome
// units, whole period) when the two stages' errors are assumed to
// correlate at Rho.
type Sensitivity struct {
	Channel        string
	Rho            float64
	Mean, Q05, Q95 float64
}

// Breakeven is one row of breakeven.csv: the rho at which the via-search
// mean reaches zero, NaN when it does not within [-0.9, 0.9].
type Breakeven struct {
	Channel string
	RhoZero float64
}

// Fitted is one row of fitted.csv: actual and posterior predictive
// summaries of stage "demand" (branded queries) or "outcome" in one week,
// in raw units; Q05..Q95 is the 90% predictive band.
type Fitted struct {
	Stage          string
	Week           time.Time
	Actual         float64
	Mean, Q05, Q95 float64
}

// Curve is one row of curves.csv: the steady-state weekly incremental
// outcome through Path at a weekly spend of WeeklySpend, with the mean
// weekly spend of the data as CurrentWeeklySpend.
type Curve struct {
	Channel, Path      string
	WeeklySpend        float64
	Mean, Q05, Q95     float64
	CurrentWeeklySpend float64
}

// Fit is a whole fit folder, read by Load.
type Fit struct {
	// Dir is the folder the fit was read from, for messages and the
	// report's subtitle only; a caller that loads a temporary folder before
	// renaming it into place may set it to the final name.
	Dir     string
	Run     Run
	Data    *Data
	Stages  []*Stage // in StageNames order
	Verdict Verdict

	Effects     []Effect
	EffectDraws map[DrawKey]DrawSeries
	Borrowed    []Borrowed
	Weekly      []Weekly
	Sensitivity []Sensitivity
	Breakeven   []Breakeven
	Fitted      []Fitted
	Curves      []Curve
}

const (
	hintFit   = "written by spillway fit"
	hintSplit = "written by spillway split; run it first"
)

// Load reads the fit folder dir. It reads every file the charts and the
// report use and checks headers, cells and cross-references (channels the
// spec names, windows of effect_draws.csv present in effects.csv). The
// error is an *Error naming the file, line and column, wrapped with the
// folder's name; a missing file wraps ErrMissing.
func Load(dir string) (*Fit, error) {
	st, err := os.Stat(dir)
	if err != nil {
		if errors.Is(err, fs.ErrNotExist) {
			return nil, fmt.Errorf("fit folder %s does not exist", dir)
		}
		return nil, err
	}
	if !st.IsDir() {
		return nil, fmt.Errorf("fit folder %s is not a folder", dir)
	}
	f := &Fit{Dir: dir}
	p := func(name string) string { return filepath.Join(dir, name) }
	if err := f.loadRun(p("spec.json")); err != nil {
		return nil, err
	}
	dataFile := f.Run.DataFile
	if dataFile == "" {
		dataFile = "data.csv"
	}
	if f.Data, err = loadData(p(dataFile), f.Run.Spec); err != nil {
		return nil, err
	}
	for _, name := range StageNames {
		s, err := loadStage(p(name), name)
		if err != nil {
			return nil, err
		}
		f.Stages = append(f.Stages, s)
	}
	if f.Verdict, err = loadVerdict(p("verdict.txt")); err != nil {
		return nil, err
	}
	steps := []func(string) error{
		f.loadEffects, f.loadEffectDraws, f.loadBorrowed, f.loadWeekly,
		f.loadSensitivity, f.loadBreakeven, f.loadFitted, f.loadCurves,
	}
	files := []string{"effects.csv", "effect_draws.csv", "borrowed.csv", "weekly.csv",
		"sensitivity.csv", "breakeven.csv", "fitted.csv", "curves.csv"}
	for i, step := range steps {
		if err := step(p(files[i])); err != nil {
			return nil, err
		}
	}
	return f, nil
}

// Stage returns the stage called name ("demand", "outcome", "naive").
func (f *Fit) Stage(name string) (*Stage, bool) {
	for _, s := range f.Stages {
		if s.Name == name {
			return s, true
		}
	}
	return nil, false
}

// Windows returns the window names of effects.csv in the order they first
// appear.
func (f *Fit) Windows() []string {
	var ws []string
	seen := map[string]bool{}
	for _, e := range f.Effects {
		if !seen[e.Window] {
			seen[e.Window] = true
			ws = append(ws, e.Window)
		}
	}
	return ws
}

// HasWindow reports whether effects.csv has rows for the window name.
func (f *Fit) HasWindow(name string) bool {
	for _, e := range f.Effects {
		if e.Window == name {
			return true
		}
	}
	return false
}

// WindowError is returned by Fit.Window for a window that effects.csv does
// not hold (or that does not parse). Available lists the windows it holds.
type WindowError struct {
	Window    string
	Available []string
	Err       error // the parse error, if the name did not parse
}

// Error names the window and lists the available ones.
func (e *WindowError) Error() string {
	msg := fmt.Sprintf("window %q is not in effects.csv", e.Window)
	if e.Err != nil {
		msg = e.Err.Error()
	}
	return msg + "; available windows: " + strings.Join(e.Available, ", ")
}

// Unwrap returns the parse error, if any.
func (e *WindowError) Unwrap() error { return e.Err }

// Window resolves the window name for charts and the report. An empty name
// means DefaultWindow. A WholePeriod window gets From and To set to the
// first and last week start of the data. The error is a *WindowError when
// the name does not parse or effects.csv has no rows for it.
func (f *Fit) Window(name string) (Window, error) {
	if name == "" {
		name = f.DefaultWindow()
	}
	w, err := ParseWindow(name)
	if err != nil {
		return Window{}, &WindowError{Window: name, Available: f.Windows(), Err: err}
	}
	if !f.HasWindow(w.Name) {
		return Window{}, &WindowError{Window: name, Available: f.Windows()}
	}
	return f.fill(w), nil
}

// Whole returns the WholePeriod window with From and To set from the data.
func (f *Fit) Whole() Window {
	return f.fill(Window{Name: "all", Kind: WholePeriod})
}

func (f *Fit) fill(w Window) Window {
	if w.Kind == WholePeriod && len(f.Data.Weeks) > 0 {
		w.From = f.Data.Weeks[0]
		w.To = f.Data.Weeks[len(f.Data.Weeks)-1]
	}
	return w
}

// FullQuarter reports whether the data holds every week that starts in
// quarter w: the week before the first one starts before the quarter and
// the week after the last one starts after it.
func (f *Fit) FullQuarter(w Window) bool {
	if w.Kind != Quarter || len(f.Data.Weeks) == 0 {
		return false
	}
	first, last := f.Data.Weeks[0], f.Data.Weeks[len(f.Data.Weeks)-1]
	return first.AddDate(0, 0, -7).Before(w.From) && last.AddDate(0, 0, 7).After(w.To)
}

// DefaultWindow returns the window a review looks at when none is asked
// for: the latest quarter of effects.csv that the data covers in full, or
// "all" when there is none.
func (f *Fit) DefaultWindow() string {
	best := Window{}
	found := false
	for _, name := range f.Windows() {
		w, err := ParseWindow(name)
		if err != nil || w.Kind != Quarter || !f.FullQuarter(w) {
			continue
		}
		if !found || w.From.After(best.From) {
			best, found = w, true
		}
	}
	if !found {
		return "all"
	}
	return best.Name
}

// Effect returns the effects.csv row for channel, path and window.
func (f *Fit) Effect(channel, path, window string) (Effect, bool) {
	for _, e := range f.Effects {
		if e.Channel == channel && e.Path == path && e.Window == window {
			return e, true
		}
	}
	return Effect{}, false
}

// BorrowedMeasure returns the borrowed.csv row for channel and measure.
func (f *Fit) BorrowedMeasure(channel, measure string) (Borrowed, bool) {
	for _, b := range f.Borrowed {
		if b.Channel == channel && b.Measure == measure {
			return b, true
		}
	}
	return Borrowed{}, false
}

// BreakevenRho returns the break-even rho of channel and whether
// breakeven.csv has a row for it; the rho is NaN when the via-search mean
// does not reach zero in range.
func (f *Fit) BreakevenRho(channel string) (float64, bool) {
	for _, b := range f.Breakeven {
		if b.Channel == channel {
			return b.RhoZero, true
		}
	}
	return math.NaN(), false
}

func (f *Fit) loadRun(path string) error {
	b, err := os.ReadFile(path)
	if err != nil {
		if errors.Is(err, fs.ErrNotExist) {
			return &Error{File: path, Err: fmt.Errorf("%w (%s)", ErrMissing, hintFit)}
		}
		return &Error{File: path, Err: err}
	}
	dec := json.NewDecoder(bytes.NewReader(b))
	dec.UseNumber()
	if err := dec.Decode(&f.Run); err != nil {
		var se *json.SyntaxError
		var te *json.UnmarshalTypeError
		switch {
		case errors.As(err, &se):
			return &Error{File: path, Line: lineAt(b, se.Offset), Err: err}
		case errors.As(err, &te):
			return &Error{File: path, Line: lineAt(b, te.Offset), Column: te.Field, Err: err}
		}
		return &Error{File: path, Err: err}
	}
	s := f.Run.Spec
	need := map[string]bool{"spec.date": s.Date != "", "spec.queries": s.Queries != "",
		"spec.outcome": s.Outcome != "", "spec.upper": len(s.Upper) > 0, "spec.search": len(s.Search) > 0}
	for _, k := range []string{"spec.date", "spec.upper", "spec.search", "spec.queries", "spec.outcome"} {
		if !need[k] {
			return &Error{File: path, Column: k, Err: errors.New("missing or empty")}
		}
	}
	return nil
}

// lineAt returns the 1-based line of byte offset off in b.
func lineAt(b []byte, off int64) int {
	if off > int64(len(b)) {
		off = int64(len(b))
	}
	return bytes.Count(b[:off], []byte("\n")) + 1
}

func loadData(path string, s Spec) (*Data, error) {
	numeric := slices.Concat(s.Upper, s.Search, []string{s.Queries, s.Outcome}, s.Controls)
	if s.Population != "" {
		numeric = append(numeric, s.Population)
	}
	req := append([]string{s.Date}, numeric...)
	if s.Region != "" {
		req = append(req, s.Region)
	}
	t, err := readTable(path, req, "copied by spillway fit")
	if err != nil {
		return nil, err
	}
	if len(t.rows) == 0 {
		return nil, &Error{File: path, Err: errors.New("no data rows")}
	}
	d := &Data{Values: make(map[string][]float64, len(numeric))}
	for _, c := range numeric {
		d.Values[c] = make([]float64, len(t.rows))
	}
	seen := map[time.Time]bool{}
	for i := range t.rows {
		ds := t.str(i, s.Date)
		day, err := time.Parse(DateLayout, ds)
		if err != nil {
			return nil, t.fail(i, s.Date, "%q is not a date YYYY-MM-DD", ds)
		}
		d.Date = append(d.Date, day)
		if !seen[day] {
			seen[day] = true
			d.Weeks = append(d.Weeks, day)
		}
		if s.Region != "" {
			d.Region = append(d.Region, t.str(i, s.Region))
		}
		for _, c := range numeric {
			v, err := t.num(i, c)
			if err != nil {
				return nil, err
			}
			d.Values[c][i] = v
		}
	}
	sort.Slice(d.Weeks, func(i, j int) bool { return d.Weeks[i].Before(d.Weeks[j]) })
	return d, nil
}

var summaryCols = []string{"parameter", "mean", "sd", "q05", "q50", "q95", "rhat", "ess_bulk", "ess_tail", "mcse_mean"}

func loadStage(dir, name string) (*Stage, error) {
	s := &Stage{Name: name}
	t, err := readTable(filepath.Join(dir, "summary.csv"), summaryCols, hintFit)
	if err != nil {
		return nil, err
	}
	for i := range t.rows {
		var p Param
		if p.Name, err = t.nonEmpty(i, "parameter"); err != nil {
			return nil, err
		}
		for _, c := range []struct {
			col string
			dst *float64
			opt bool
		}{
			{"mean", &p.Mean, false}, {"sd", &p.SD, true}, {"q05", &p.Q05, false}, {"q50", &p.Q50, false},
			{"q95", &p.Q95, false}, {"rhat", &p.Rhat, true}, {"ess_bulk", &p.ESSBulk, true},
			{"ess_tail", &p.ESSTail, true}, {"mcse_mean", &p.MCSEMean, true},
		} {
			if c.opt {
				*c.dst, err = t.optNum(i, c.col)
			} else {
				*c.dst, err = t.num(i, c.col)
			}
			if err != nil {
				return nil, err
			}
		}
		s.Params = append(s.Params, p)
	}
	if len(s.Params) == 0 {
		return nil, &Error{File: t.path, Err: errors.New("no parameters")}
	}
	path := filepath.Join(dir, "stats.json")
	b, err := os.ReadFile(path)
	if err != nil {
		if errors.Is(err, fs.ErrNotExist) {
			return nil, &Error{File: path, Err: fmt.Errorf("%w (%s)", ErrMissing, hintFit)}
		}
		return nil, &Error{File: path, Err: err}
	}
	if err := json.Unmarshal(b, &s.Stats); err != nil {
		var te *json.UnmarshalTypeError
		if errors.As(err, &te) {
			return nil, &Error{File: path, Line: lineAt(b, te.Offset), Column: te.Field, Err: err}
		}
		return nil, &Error{File: path, Err: err}
	}
	return s, nil
}

func loadVerdict(path string) (Verdict, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		if errors.Is(err, fs.ErrNotExist) {
			return Verdict{}, &Error{File: path, Err: fmt.Errorf("%w (%s)", ErrMissing, hintFit)}
		}
		return Verdict{}, &Error{File: path, Err: err}
	}
	var v Verdict
	sc := bufio.NewScanner(bytes.NewReader(b))
	line := 0
	for sc.Scan() {
		line++
		text := strings.TrimSpace(sc.Text())
		if line == 1 {
			switch text {
			case "trustworthy":
				v.Trustworthy = true
			case "not trustworthy":
			default:
				return Verdict{}, &Error{File: path, Line: 1,
					Err: fmt.Errorf("first line %q is neither \"trustworthy\" nor \"not trustworthy\"", text)}
			}
			continue
		}
		if text == "" {
			continue
		}
		r := Reason{Text: text}
		if stage, rest, ok := strings.Cut(text, ":"); ok && !strings.ContainsAny(stage, " \t") {
			r = Reason{Stage: stage, Text: strings.TrimSpace(rest)}
		}
		v.Reasons = append(v.Reasons, r)
	}
	if line == 0 {
		return Verdict{}, &Error{File: path, Err: errors.New("empty file")}
	}
	return v, nil
}

func (f *Fit) knownChannel(c string) bool {
	return slices.Contains(f.Run.Spec.Upper, c) || slices.Contains(f.Run.Spec.Search, c)
}

func (f *Fit) loadEffects(path string) error {
	t, err := readTable(path, []string{"channel", "path", "window", "mean", "q05", "q50", "q95", "per_unit_spend"}, hintSplit)
	if err != nil {
		return err
	}
	seen := map[DrawKey]bool{}
	for i := range t.rows {
		var e Effect
		if e.Channel, err = t.nonEmpty(i, "channel"); err != nil {
			return err
		}
		if !f.knownChannel(e.Channel) {
			return t.fail(i, "channel", "%q is not a channel of spec.json", e.Channel)
		}
		if e.Path, err = t.oneOf(i, "path", PathDirect, PathViaSearch, PathTotal, PathMediatedShare); err != nil {
			return err
		}
		if e.Window, err = t.nonEmpty(i, "window"); err != nil {
			return err
		}
		if _, perr := ParseWindow(e.Window); perr != nil {
			return t.fail(i, "window", "%v", perr)
		}
		// A share of a zero total (a window without spend) is undefined.
		if e.Mean, err = t.undefNum(i, "mean"); err != nil {
			return err
		}
		if e.Q05, err = t.undefNum(i, "q05"); err != nil {
			return err
		}
		if e.Q50, err = t.undefNum(i, "q50"); err != nil {
			return err
		}
		if e.Q95, err = t.undefNum(i, "q95"); err != nil {
			return err
		}
		if e.PerUnitSpend, err = t.optNum(i, "per_unit_spend"); err != nil {
			return err
		}
		k := DrawKey{e.Channel, e.Path, e.Window}
		if seen[k] {
			return t.fail(i, "window", "second row for %s %s %s", e.Channel, e.Path, e.Window)
		}
		seen[k] = true
		f.Effects = append(f.Effects, e)
	}
	if len(f.Effects) == 0 {
		return &Error{File: path, Err: errors.New("no rows")}
	}
	return nil
}

func (f *Fit) loadEffectDraws(path string) error {
	t, err := readTable(path, []string{"channel", "path", "window", ".draw", "value"}, hintSplit)
	if err != nil {
		return err
	}
	f.EffectDraws = map[DrawKey]DrawSeries{}
	for i := range t.rows {
		var k DrawKey
		k.Channel, k.Path, k.Window = t.str(i, "channel"), t.str(i, "path"), t.str(i, "window")
		if _, ok := f.Effect(k.Channel, k.Path, k.Window); !ok {
			return t.fail(i, "window", "no effects.csv row for %s %s %s", k.Channel, k.Path, k.Window)
		}
		d, err := t.integer(i, ".draw")
		if err != nil {
			return err
		}
		v, err := t.num(i, "value")
		if err != nil {
			return err
		}
		s := f.EffectDraws[k]
		s.Draw = append(s.Draw, d)
		s.Value = append(s.Value, v)
		f.EffectDraws[k] = s
	}
	for k, s := range f.EffectDraws {
		idx := make([]int, len(s.Draw))
		for i := range idx {
			idx[i] = i
		}
		sort.SliceStable(idx, func(a, b int) bool { return s.Draw[idx[a]] < s.Draw[idx[b]] })
		sorted := DrawSeries{Draw: make([]int, len(idx)), Value: make([]float64, len(idx))}
		for i, j := range idx {
			sorted.Draw[i], sorted.Value[i] = s.Draw[j], s.Value[j]
			if i > 0 && sorted.Draw[i] == sorted.Draw[i-1] {
				return &Error{File: path, Column: ".draw",
					Err: fmt.Errorf("draw %d appears twice for %s %s %s", sorted.Draw[i], k.Channel, k.Path, k.Window)}
			}
		}
		f.EffectDraws[k] = sorted
	}
	return nil
}

func (f *Fit) loadBorrowed(path string) error {
	t, err := readTable(path, []string{"channel", "measure", "mean", "q05", "q50", "q95"}, hintSplit)
	if err != nil {
		return err
	}
	for i := range t.rows {
		var b Borrowed
		b.Channel = t.str(i, "channel")
		if !slices.Contains(f.Run.Spec.Search, b.Channel) {
			return t.fail(i, "channel", "%q is not a paid-search channel of spec.json", b.Channel)
		}
		if b.Measure, err = t.oneOf(i, "measure", "controlled", "apparent", "naive", "borrowed_share"); err != nil {
			return err
		}
		for _, c := range []struct {
			col string
			dst *float64
		}{{"mean", &b.Mean}, {"q05", &b.Q05}, {"q50", &b.Q50}, {"q95", &b.Q95}} {
			if *c.dst, err = t.num(i, c.col); err != nil {
				return err
			}
		}
		f.Borrowed = append(f.Borrowed, b)
	}
	return nil
}

func (t *table) date(i int, name string) (time.Time, error) {
	s := t.str(i, name)
	d, err := time.Parse(DateLayout, s)
	if err != nil {
		return time.Time{}, t.fail(i, name, "%q is not a date YYYY-MM-DD", s)
	}
	return d, nil
}

func (f *Fit) loadWeekly(path string) error {
	t, err := readTable(path, []string{"week", "channel", "path", "mean", "q05", "q95"}, hintSplit)
	if err != nil {
		return err
	}
	for i := range t.rows {
		var w Weekly
		if w.Week, err = t.date(i, "week"); err != nil {
			return err
		}
		w.Channel = t.str(i, "channel")
		if !f.knownChannel(w.Channel) {
			return t.fail(i, "channel", "%q is not a channel of spec.json", w.Channel)
		}
		if w.Path, err = t.oneOf(i, "path", PathDirect, PathViaSearch, PathTotal); err != nil {
			return err
		}
		if w.Mean, err = t.num(i, "mean"); err != nil {
			return err
		}
		if w.Q05, err = t.num(i, "q05"); err != nil {
			return err
		}
		if w.Q95, err = t.num(i, "q95"); err != nil {
			return err
		}
		f.Weekly = append(f.Weekly, w)
	}
	return nil
}

func (f *Fit) loadSensitivity(path string) error {
	t, err := readTable(path, []string{"channel", "rho", "via_search_mean", "via_search_q05", "via_search_q95"}, hintSplit)
	if err != nil {
		return err
	}
	for i := range t.rows {
		var s Sensitivity
		s.Channel = t.str(i, "channel")
		if !slices.Contains(f.Run.Spec.Upper, s.Channel) {
			return t.fail(i, "channel", "%q is not an upper-funnel channel of spec.json", s.Channel)
		}
		if s.Rho, err = t.num(i, "rho"); err != nil {
			return err
		}
		if s.Rho < -1 || s.Rho > 1 {
			return t.fail(i, "rho", "%v is outside [-1, 1]", s.Rho)
		}
		if s.Mean, err = t.num(i, "via_search_mean"); err != nil {
			return err
		}
		if s.Q05, err = t.num(i, "via_search_q05"); err != nil {
			return err
		}
		if s.Q95, err = t.num(i, "via_search_q95"); err != nil {
			return err
		}
		f.Sensitivity = append(f.Sensitivity, s)
	}
	return nil
}

func (f *Fit) loadBreakeven(path string) error {
	t, err := readTable(path, []string{"channel", "rho_zero"}, hintSplit)
	if err != nil {
		return err
	}
	for i := range t.rows {
		var b Breakeven
		b.Channel = t.str(i, "channel")
		if !slices.Contains(f.Run.Spec.Upper, b.Channel) {
			return t.fail(i, "channel", "%q is not an upper-funnel channel of spec.json", b.Channel)
		}
		if b.RhoZero, err = t.optNum(i, "rho_zero"); err != nil {
			return err
		}
		f.Breakeven = append(f.Breakeven, b)
	}
	return nil
}

func (f *Fit) loadFitted(path string) error {
	t, err := readTable(path, []string{"stage", "week", "actual", "mean", "q05", "q95"}, hintSplit)
	if err != nil {
		return err
	}
	for i := range t.rows {
		var r Fitted
		if r.Stage, err = t.oneOf(i, "stage", "demand", "outcome"); err != nil {
			return err
		}
		if r.Week, err = t.date(i, "week"); err != nil {
			return err
		}
		for _, c := range []struct {
			col string
			dst *float64
		}{{"actual", &r.Actual}, {"mean", &r.Mean}, {"q05", &r.Q05}, {"q95", &r.Q95}} {
			if *c.dst, err = t.num(i, c.col); err != nil {
				return err
			}
		}
		f.Fitted = append(f.Fitted, r)
	}
	return nil
}

func (f *Fit) loadCurves(path string) error {
	t, err := readTable(path, []string{"channel", "path", "weekly_spend", "mean", "q05", "q95", "current_weekly_spend"}, hintSplit)
	if err != nil {
		return err
	}
	for i := range t.rows {
		var c Curve
		c.Channel = t.str(i, "channel")
		if !slices.Contains(f.Run.Spec.Upper, c.Channel) {
			return t.fail(i, "channel", "%q is not an upper-funnel channel of spec.json", c.Channel)
		}
		if c.Path, err = t.oneOf(i, "path", PathDirect, PathViaSearch, PathTotal); err != nil {
			return err
		}
		for _, col := range []struct {
			name string
			dst  *float64
		}{{"weekly_spend", &c.WeeklySpend}, {"mean", &c.Mean}, {"q05", &c.Q05}, {"q95", &c.Q95},
			{"current_weekly_spend", &c.CurrentWeeklySpend}} {
			if *col.dst, err = t.num(i, col.name); err != nil {
				return err
			}
		}
		if c.WeeklySpend < 0 {
			return t.fail(i, "weekly_spend", "negative spend %v", c.WeeklySpend)
		}
		f.Curves = append(f.Curves, c)
	}
	return nil
}
