package fitfolder

import (
	"bytes"
	"errors"
	"fmt"
	"os"
	"path/filepath"

	"spillway/funnel/mcmc"
	"spillway/funnel/table"
)

// StageNames are the stage folders of a fit, in the order Fit.Stages holds
// them.
var StageNames = []string{"demand", "outcome", "naive"}

// Stage is one fitted model stage: "demand", "outcome" or "naive".
type Stage struct {
	Name string
	// Params is summary.csv: the posterior summary of each parameter.
	Params []Param
	// Stats is stats.json.
	Stats Stats
	// Draws is draws.csv; nil unless read with ReadDraws (the charts and
	// the report do not need it).
	Draws *mcmc.Fit
}

// Param is one row of a stage's summary.csv: the posterior summary of one
// parameter on its natural scale. Rhat and the ESS values are NaN when
// undefined (a constant parameter) or when the file leaves them empty (NA).
type Param struct {
	Name             string
	Mean, SD         float64
	Q05, Q50, Q95    float64
	Rhat             float64
	ESSBulk, ESSTail float64
	MCSEMean         float64
}

// paramRow is Param as a line of summary.csv.
type paramRow struct {
	Name     string        `csv:"parameter"`
	Mean     table.Stat    `csv:"mean"`
	SD       table.OptStat `csv:"sd"`
	Q05      table.Stat    `csv:"q05"`
	Q50      table.Stat    `csv:"q50"`
	Q95      table.Stat    `csv:"q95"`
	Rhat     table.OptStat `csv:"rhat"`
	ESSBulk  table.OptStat `csv:"ess_bulk"`
	ESSTail  table.OptStat `csv:"ess_tail"`
	MCSEMean table.OptStat `csv:"mcse_mean"`
}

// ParamsOf returns the summary rows of the sampler's summaries.
func ParamsOf(s []mcmc.Summary) []Param {
	out := make([]Param, len(s))
	for i, p := range s {
		out[i] = Param{Name: p.Parameter, Mean: p.Mean, SD: p.SD, Q05: p.Q05, Q50: p.Q50, Q95: p.Q95,
			Rhat: p.Rhat, ESSBulk: p.ESSBulk, ESSTail: p.ESSTail, MCSEMean: p.MCSEMean}
	}
	return out
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

// StatsOf returns the stats of a fit whose stage took wall seconds.
func StatsOf(f *mcmc.Fit, wall float64) Stats {
	s := Stats{WallSeconds: wall}
	for _, c := range f.Chains {
		st := c.Stats
		s.WarmupSeconds = append(s.WarmupSeconds, st.WarmupSeconds)
		s.SamplingSeconds = append(s.SamplingSeconds, st.SamplingSeconds)
		s.GradientEvaluations = append(s.GradientEvaluations, int64(st.GradientEvaluations))
		s.Divergences = append(s.Divergences, st.Divergences)
		s.TreedepthHits = append(s.TreedepthHits, st.TreeDepthHits)
		s.StepSize = append(s.StepSize, st.StepSize)
		s.MeanLeapfrogs = append(s.MeanLeapfrogs, st.MeanLeapfrogs)
		s.EBFMI = append(s.EBFMI, st.EBFMI)
	}
	return s
}

// TotalDivergences returns the divergent transitions summed over chains.
func (s Stats) TotalDivergences() int {
	n := 0
	for _, d := range s.Divergences {
		n += d
	}
	return n
}

// readStage reads summary.csv and stats.json of the stage folder dir.
func readStage(dir, name string) (*Stage, error) {
	s := &Stage{Name: name}
	path := filepath.Join(dir, "summary.csv")
	var rows []paramRow
	lines, err := readTable(path, hintFit, &rows)
	if err != nil {
		return nil, err
	}
	for i, r := range rows {
		if r.Name == "" {
			return nil, &Error{File: path, Line: lines[i], Column: "parameter", Err: errors.New("empty cell")}
		}
		s.Params = append(s.Params, Param{Name: r.Name, Mean: float64(r.Mean), SD: float64(r.SD), Q05: float64(r.Q05),
			Q50: float64(r.Q50), Q95: float64(r.Q95), Rhat: float64(r.Rhat), ESSBulk: float64(r.ESSBulk),
			ESSTail: float64(r.ESSTail), MCSEMean: float64(r.MCSEMean)})
	}
	if len(s.Params) == 0 {
		return nil, &Error{File: path, Err: errors.New("no parameters")}
	}
	if err := readJSON(filepath.Join(dir, "stats.json"), &s.Stats); err != nil {
		return nil, err
	}
	return s, nil
}

// readDraws reads the stage folder's draws.csv.
func readDraws(dir string) (*mcmc.Fit, error) {
	path := filepath.Join(dir, "draws.csv")
	f, err := os.Open(path)
	if err != nil {
		return nil, openError(path, hintFit, err)
	}
	defer f.Close()
	fit, err := mcmc.ReadDraws(f)
	if err != nil {
		var pe *mcmc.ParseError
		if errors.As(err, &pe) {
			return nil, &Error{File: path, Line: pe.Line, Column: pe.Column, Err: pe.Err}
		}
		return nil, &Error{File: path, Err: err}
	}
	return fit, nil
}

// files renders the stage's files into files under the stage's folder:
// draws.csv when Draws is set, summary.csv and stats.json.
func (s *Stage) files(files map[string][]byte) error {
	if s.Draws != nil {
		var b bytes.Buffer
		if err := mcmc.WriteDraws(&b, s.Draws); err != nil {
			return err
		}
		files[s.Name+"/draws.csv"] = b.Bytes()
	}
	rows := make([]paramRow, len(s.Params))
	for i, p := range s.Params {
		rows[i] = paramRow{Name: p.Name, Mean: table.Stat(p.Mean), SD: table.OptStat(p.SD), Q05: table.Stat(p.Q05),
			Q50: table.Stat(p.Q50), Q95: table.Stat(p.Q95), Rhat: table.OptStat(p.Rhat), ESSBulk: table.OptStat(p.ESSBulk),
			ESSTail: table.OptStat(p.ESSTail), MCSEMean: table.OptStat(p.MCSEMean)}
	}
	b, err := tableFile(rows)
	if err != nil {
		return fmt.Errorf("%s/summary.csv: %w", s.Name, err)
	}
	files[s.Name+"/summary.csv"] = b
	if files[s.Name+"/stats.json"], err = jsonFile(s.Stats); err != nil {
		return fmt.Errorf("%s/stats.json: %w", s.Name, err)
	}
	return nil
}

// readTable reads the table file at path into rows; hint says what writes
// the file, for the message when it is missing.
func readTable(path, hint string, rows any) ([]int, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, openError(path, hint, err)
	}
	defer f.Close()
	lines, err := table.Read(f, path, rows, table.Options{})
	if err != nil {
		return nil, located(path, err)
	}
	return lines, nil
}

// tableFile renders rows as a table file.
func tableFile(rows any) ([]byte, error) {
	var b bytes.Buffer
	err := table.Write(&b, rows)
	return b.Bytes(), err
}
