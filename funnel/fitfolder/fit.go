package fitfolder

import (
	"errors"
	"fmt"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"strings"
)

// Fit is a whole fit folder as values.
type Fit struct {
	// Dir is the folder the fit was read from, for messages and the
	// report's subtitle only; a caller that renders a temporary folder
	// before renaming it into place sets it to the final name.
	Dir  string
	Run  Run
	Data *Data
	// Priors is priors.csv, the priors file the fit was given; nil when
	// none.
	Priors  []byte
	Stages  []*Stage // in StageNames order
	Verdict Verdict
	Split
	// Plan is the budget plan `spillway allocate` wrote into the folder
	// (plan.csv, plan_weekly.csv, plan.json); nil when there is none.
	Plan *Plan
	// Drift is drift.csv (each drifting coefficient's weekly multiplier)
	// and Lifts lifts.csv (each lift test beside the model), read by Load
	// when the fit had drifting channels or lift tests; nil otherwise.
	Drift       []Drift
	DriftChange []DriftChange // drift_change.csv, with Drift
	Lifts       []Lift
}

// Open reads what a fit folder needs to be refitted or split: spec.json,
// data.csv and, when the fit had a priors file, priors.csv. A missing
// folder is an error saying so; any other problem is an *Error naming the
// file (and the line and column), and a missing file wraps ErrMissing.
func Open(dir string) (*Fit, error) {
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
	if IsShard(dir) {
		return nil, notAShard(dir)
	}
	f := &Fit{Dir: dir}
	if f.Run, err = readRun(filepath.Join(dir, "spec.json")); err != nil {
		return nil, err
	}
	dataFile := f.Run.DataFile
	if dataFile == "" {
		dataFile = "data.csv"
	}
	if f.Data, err = readData(filepath.Join(dir, dataFile), f.Run.Spec); err != nil {
		return nil, err
	}
	if f.Run.Priors != "" {
		path := filepath.Join(dir, "priors.csv")
		if f.Priors, err = os.ReadFile(path); err != nil {
			return nil, openError(path, hintFit, err)
		}
	}
	return f, nil
}

// PriorsPath is where the copy of the priors file lives, for messages.
func (f *Fit) PriorsPath() string { return filepath.Join(f.Dir, "priors.csv") }

// ReadDraws reads every stage's draws.csv into Stages.
func (f *Fit) ReadDraws() error {
	for k, name := range StageNames {
		d, err := readDraws(filepath.Join(f.Dir, name))
		if err != nil {
			return err
		}
		if k >= len(f.Stages) {
			f.Stages = append(f.Stages, &Stage{Name: name})
		}
		f.Stages[k].Draws = d
	}
	return nil
}

// Load reads the fit folder dir for the charts and the report: Open, then
// every stage's summary.csv and stats.json, verdict.txt, the split's
// tables and the budget plan if the folder holds one, checking headers,
// cells and cross-references (channels the spec names, draws of effects
// that effects.csv holds). The draws are not read.
func Load(dir string) (*Fit, error) {
	f, err := Open(dir)
	if err != nil {
		return nil, err
	}
	for _, name := range StageNames {
		s, err := readStage(filepath.Join(dir, name), name)
		if err != nil {
			return nil, err
		}
		f.Stages = append(f.Stages, s)
	}
	if f.Verdict, err = readVerdict(filepath.Join(dir, "verdict.txt")); err != nil {
		return nil, err
	}
	if f.Split, err = readSplit(dir, f.Run); err != nil {
		return nil, err
	}
	if err := readRegions(dir, f); err != nil {
		return nil, err
	}
	if HasPlan(dir) {
		if f.Plan, err = ReadPlan(dir); err != nil {
			return nil, err
		}
	}
	if err := f.ReadDrift(dir); err != nil {
		return nil, err
	}
	return f, nil
}

// FitFiles renders what `spillway fit` writes, by path relative to the
// folder: spec.json, data.csv, priors.csv (when Priors is set), each
// stage's draws.csv (when read), summary.csv and stats.json, and
// verdict.txt.
func (f *Fit) FitFiles() (map[string][]byte, error) {
	files := map[string][]byte{}
	var err error
	if files["data.csv"], err = f.Data.file(); err != nil {
		return nil, fmt.Errorf("data.csv: %w", err)
	}
	if f.Priors != nil {
		files["priors.csv"] = f.Priors
	}
	if files["spec.json"], err = jsonFile(f.Run); err != nil {
		return nil, fmt.Errorf("spec.json: %w", err)
	}
	for _, s := range f.Stages {
		if err := s.files(files); err != nil {
			return nil, err
		}
	}
	files["verdict.txt"] = []byte(f.Verdict.Text())
	return files, nil
}

// Write writes the whole fit folder into dir (created if needed): FitFiles
// and the split's Files.
func (f *Fit) Write(dir string) error {
	files, err := f.FitFiles()
	if err != nil {
		return err
	}
	more, err := f.Split.Files()
	if err != nil {
		return err
	}
	for name, b := range more {
		files[name] = b
	}
	for name, b := range files {
		path := filepath.Join(dir, filepath.FromSlash(name))
		if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
			return err
		}
		if err := os.WriteFile(path, b, 0o644); err != nil {
			return err
		}
	}
	return nil
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

// Effect returns the effects.csv row for channel, path and window.
func (s *Split) Effect(channel, path, window string) (Effect, bool) {
	for _, e := range s.Effects {
		if e.Channel == channel && e.Path == path && e.Window == window {
			return e, true
		}
	}
	return Effect{}, false
}

// ReturnMeasure returns the returns.csv row for channel, window and
// measure; ok is false when there is none (or no returns.csv).
func (s *Split) ReturnMeasure(channel, window, measure string) (Return, bool) {
	for _, r := range s.Returns {
		if r.Channel == channel && r.Window == window && r.Measure == measure {
			return r, true
		}
	}
	return Return{}, false
}

// BorrowedMeasure returns the borrowed.csv row for channel and measure
// over the whole period.
func (s *Split) BorrowedMeasure(channel, measure string) (Borrowed, bool) {
	return s.BorrowedIn(channel, measure, "all")
}

// BorrowedIn returns the borrowed.csv row for channel and measure over
// window.
func (s *Split) BorrowedIn(channel, measure, window string) (Borrowed, bool) {
	for _, b := range s.Borrowed {
		if b.Channel == channel && b.Measure == measure && b.Window == window {
			return b, true
		}
	}
	return Borrowed{}, false
}

// BreakevenRho returns the break-even rho of channel and whether
// breakeven.csv has a row for it; the rho is NaN when the via-search mean
// does not reach zero in range.
func (s *Split) BreakevenRho(channel string) (float64, bool) {
	for _, b := range s.Breakeven {
		if b.Channel == channel {
			return b.RhoZero, true
		}
	}
	return math.NaN(), false
}

// Windows returns the window names of effects.csv in the order they first
// appear.
func (s *Split) Windows() []string {
	var ws []string
	seen := map[string]bool{}
	for _, e := range s.Effects {
		if !seen[e.Window] {
			seen[e.Window] = true
			ws = append(ws, e.Window)
		}
	}
	return ws
}

// HasWindow reports whether effects.csv has rows for the window name.
func (s *Split) HasWindow(name string) bool {
	for _, e := range s.Effects {
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
