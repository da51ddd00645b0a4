package fitfolder

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"io/fs"
	"maps"
	"os"
	"path/filepath"
	"slices"

	"spillway/funnel/mcmc"
)

// A shard folder holds one chain of a fit whose chains ran as separate jobs
// (`spillway fit --chain I/N`), waiting to be merged with the others into
// the fit folder one run would have written. It holds what the merge needs
// and nothing that reads as a finished fit (no spec.json, summary or
// verdict):
//
//	shard.json            Shard: which chain of how many, the fit's settings, the hashes of its inputs, each stage's sampler statistics
//	data.csv              Data, as in a fit folder
//	priors.csv            the priors file's copy, when the fit had one
//	lift_tests.csv        the lift-test file's copy, when the fit had one
//	STAGE/draws.csv       the chain's draws of each of ShardStages (in mcmc's tidy CSV, the chain numbered 1)
const (
	ShardFile   = "shard.json"
	ShardFormat = "spillway-fit-shard-1"
)

// ShardStages are the stages a shard holds: the fit's three and the
// baseline stage of the support check, whose draws the merge needs for its
// PSIS-LOO comparison.
var ShardStages = []string{"demand", "outcome", "naive", "baseline"}

// PanelShardStages are the stages a shard of a region panel holds: the
// fit's three (the support check is not made for a panel).
var PanelShardStages = ShardStages[:3:3]

// Shard is shard.json.
type Shard struct {
	Format string `json:"format"`
	// About says in words what the folder is and how to merge it.
	About string `json:"about"`
	// Tool is the version of spillway that sampled the chain; shards of
	// one fit come from the same version.
	Tool string `json:"tool"`
	// Command is "fit" or "run": what sampled the chain, and so what the
	// merge writes.
	Command string `json:"command"`
	// Chain is the chain held (1-based) of Run.Chains.
	Chain int `json:"chain"`
	// Data, Priors and LiftTests are the SHA-256 of data.csv, priors.csv
	// and lift_tests.csv (empty without them).
	Data      string `json:"data_sha256"`
	Priors    string `json:"priors_sha256,omitempty"`
	LiftTests string `json:"lift_tests_sha256,omitempty"`
	// Run is the fit's spec.json without its command, which the merge
	// writes for its own output folder.
	Run Run `json:"run"`
	// Review holds run's own options, for a chain sampled by run.
	Review *Review `json:"review,omitempty"`
	// Panel is set when the chain is one of a region panel's fit, whose
	// stages are PanelShardStages.
	Panel bool `json:"panel,omitempty"`
	// Stages are the sampler's statistics of the chain, one per
	// StageNames entry.
	Stages []ShardStage `json:"stages"`
}

// StageNames returns the stages the shard holds: ShardStages, or
// PanelShardStages for a region panel.
func (m Shard) StageNames() []string {
	if m.Panel {
		return PanelShardStages
	}
	return ShardStages
}

// Review is what run does after the fit: the review window (empty: the
// default), the effect below which a channel is negligible, and whether it
// plans the budget.
type Review struct {
	Window     string  `json:"window,omitempty"`
	Negligible float64 `json:"negligible"`
	Allocate   bool    `json:"allocate,omitempty"`
}

// ShardStage is one stage of a shard: its wall time and the chain's
// sampler statistics (every field of mcmc.ChainStats, so that the merged
// fit is the fit one run holds in memory).
type ShardStage struct {
	Name                string    `json:"name"`
	WallSeconds         float64   `json:"wall_seconds"`
	WarmupSeconds       float64   `json:"warmup_seconds"`
	SamplingSeconds     float64   `json:"sampling_seconds"`
	GradientEvaluations int       `json:"gradient_evaluations"`
	Divergences         int       `json:"divergences"`
	TreedepthHits       int       `json:"treedepth_hits"`
	StepSize            float64   `json:"step_size"`
	EBFMI               float64   `json:"ebfmi"`
	MeanLeapfrogs       float64   `json:"mean_leapfrogs"`
	MeanAccept          float64   `json:"mean_accept"`
	InvMetric           []float64 `json:"inv_metric"`
}

// ShardStageOf records a one-chain fit's statistics.
func ShardStageOf(name string, f *mcmc.Fit, wall float64) ShardStage {
	st := f.Chains[0].Stats
	return ShardStage{Name: name, WallSeconds: wall, WarmupSeconds: st.WarmupSeconds, SamplingSeconds: st.SamplingSeconds,
		GradientEvaluations: st.GradientEvaluations, Divergences: st.Divergences, TreedepthHits: st.TreeDepthHits,
		StepSize: st.StepSize, EBFMI: st.EBFMI, MeanLeapfrogs: st.MeanLeapfrogs, MeanAccept: st.MeanAccept, InvMetric: st.InvMetric}
}

// ChainStats returns the statistics as the sampler reported them.
func (s ShardStage) ChainStats() mcmc.ChainStats {
	return mcmc.ChainStats{WarmupSeconds: s.WarmupSeconds, SamplingSeconds: s.SamplingSeconds, GradientEvaluations: s.GradientEvaluations,
		Divergences: s.Divergences, TreeDepthHits: s.TreedepthHits, StepSize: s.StepSize, EBFMI: s.EBFMI,
		MeanLeapfrogs: s.MeanLeapfrogs, MeanAccept: s.MeanAccept, InvMetric: s.InvMetric}
}

// ShardFolder is a shard folder as values.
type ShardFolder struct {
	// Dir is the folder read from, for messages.
	Dir      string
	Manifest Shard
	Data     *Data
	// Priors and LiftTests are the copies of the input files; nil without.
	Priors, LiftTests []byte
	// Draws are the chain's draws per ShardStages entry, one chain each.
	Draws []*mcmc.Fit
}

// NewShardFolder is the shard of manifest m (its hashes, format and about
// filled in here) with the data, input copies and draws.
func NewShardFolder(m Shard, d *Data, priors, liftTests []byte, draws []*mcmc.Fit) (*ShardFolder, error) {
	if names := m.StageNames(); len(draws) != len(names) || len(m.Stages) != len(names) {
		return nil, fmt.Errorf("fitfolder: a shard holds the stages %v", names)
	}
	b, err := d.file()
	if err != nil {
		return nil, err
	}
	m.Format = ShardFormat
	m.About = fmt.Sprintf("chain %d of %d of a fit; not a fit folder: merge the folders of all %d chains with spillway %s --merge FOLDER... --out FOLDER", m.Chain, m.Run.Chains, m.Run.Chains, m.Command)
	m.Data, m.Priors, m.LiftTests = hashOf(b), hashOf(priors), hashOf(liftTests)
	return &ShardFolder{Manifest: m, Data: d, Priors: priors, LiftTests: liftTests, Draws: draws}, nil
}

// hashOf is the hex SHA-256 of b, "" for nil.
func hashOf(b []byte) string {
	if b == nil {
		return ""
	}
	h := sha256.Sum256(b)
	return hex.EncodeToString(h[:])
}

// Files renders the shard folder's files by path relative to the folder.
func (s *ShardFolder) Files() (map[string][]byte, error) {
	files := map[string][]byte{}
	var err error
	if files["data.csv"], err = s.Data.file(); err != nil {
		return nil, fmt.Errorf("data.csv: %w", err)
	}
	if s.Priors != nil {
		files["priors.csv"] = s.Priors
	}
	if s.LiftTests != nil {
		files[LiftTestsFile] = s.LiftTests
	}
	if files[ShardFile], err = jsonFile(s.Manifest); err != nil {
		return nil, fmt.Errorf("%s: %w", ShardFile, err)
	}
	for k, name := range s.Manifest.StageNames() {
		var b bytes.Buffer
		if err := mcmc.WriteDraws(&b, s.Draws[k]); err != nil {
			return nil, err
		}
		files[name+"/draws.csv"] = b.Bytes()
	}
	return files, nil
}

// IsShard reports whether dir holds a shard's manifest.
func IsShard(dir string) bool {
	_, err := os.Stat(filepath.Join(dir, ShardFile))
	return err == nil
}

// ReadShard reads the shard folder dir and checks it is whole: its format,
// the hashes of its data and input copies, one chain of Run.Draws draws in
// every stage. Problems are *Error naming the file.
func ReadShard(dir string) (*ShardFolder, error) {
	st, err := os.Stat(dir)
	if err != nil {
		if errors.Is(err, fs.ErrNotExist) {
			return nil, fmt.Errorf("shard folder %s does not exist", dir)
		}
		return nil, err
	}
	if !st.IsDir() {
		return nil, fmt.Errorf("shard folder %s is not a folder", dir)
	}
	s := &ShardFolder{Dir: dir}
	path := filepath.Join(dir, ShardFile)
	if _, err := os.Stat(path); errors.Is(err, fs.ErrNotExist) {
		return nil, &Error{File: path, Err: fmt.Errorf("%s is not the folder of one chain written by spillway fit --chain or run --chain", dir)}
	}
	if err := readJSON(path, &s.Manifest); err != nil {
		return nil, err
	}
	m := &s.Manifest
	switch {
	case m.Format != ShardFormat:
		return nil, &Error{File: path, Column: "format", Err: fmt.Errorf("%q, expected %q (a folder written by spillway fit --chain)", m.Format, ShardFormat)}
	case m.Run.Chains < 1 || m.Chain < 1 || m.Chain > m.Run.Chains:
		return nil, &Error{File: path, Column: "chain", Err: fmt.Errorf("chain %d of %d", m.Chain, m.Run.Chains)}
	case len(m.Stages) != len(m.StageNames()):
		return nil, &Error{File: path, Column: "stages", Err: fmt.Errorf("%d stages, expected %d", len(m.Stages), len(m.StageNames()))}
	}
	for k, name := range m.StageNames() {
		if m.Stages[k].Name != name {
			return nil, &Error{File: path, Column: "stages", Err: fmt.Errorf("stage %d is %q, expected %q", k+1, m.Stages[k].Name, name)}
		}
	}
	if s.Data, err = readData(filepath.Join(dir, "data.csv"), m.Run.Spec); err != nil {
		return nil, err
	}
	if err := checkHash(filepath.Join(dir, "data.csv"), m.Data); err != nil {
		return nil, err
	}
	if s.Priors, err = readCopy(dir, "priors.csv", m.Priors); err != nil {
		return nil, err
	}
	if s.LiftTests, err = readCopy(dir, LiftTestsFile, m.LiftTests); err != nil {
		return nil, err
	}
	for k, name := range m.StageNames() {
		d, err := readDraws(filepath.Join(dir, name))
		if err != nil {
			return nil, err
		}
		p := filepath.Join(dir, name, "draws.csv")
		if len(d.Chains) != 1 || d.NumDraws() != m.Run.Draws {
			return nil, &Error{File: p, Err: fmt.Errorf("%d chains of %d draws in all, expected one chain of %d", len(d.Chains), d.NumDraws(), m.Run.Draws)}
		}
		d.Chains[0].Stats = m.Stages[k].ChainStats()
		s.Draws = append(s.Draws, d)
	}
	return s, nil
}

// readCopy reads the input copy name of the shard folder dir when its
// manifest gives a hash, and checks the hash.
func readCopy(dir, name, hash string) ([]byte, error) {
	path := filepath.Join(dir, name)
	if hash == "" {
		return nil, nil
	}
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, openError(path, "copied by spillway fit --chain", err)
	}
	if err := checkHash(path, hash); err != nil {
		return nil, err
	}
	return b, nil
}

// checkHash checks that the file at path has the SHA-256 hash.
func checkHash(path, hash string) error {
	b, err := os.ReadFile(path)
	if err != nil {
		return openError(path, hintData, err)
	}
	if got := hashOf(b); got != hash {
		return &Error{File: path, Err: fmt.Errorf("its SHA-256 is %s, but %s records %s: the file changed after the chain was sampled", got, ShardFile, hash)}
	}
	return nil
}

// notAShard is the error Open returns for a shard folder.
func notAShard(dir string) error {
	var m Shard
	b, err := os.ReadFile(filepath.Join(dir, ShardFile))
	if err == nil {
		err = json.Unmarshal(b, &m)
	}
	what := "one chain of a fit"
	if err == nil && m.Run.Chains > 0 {
		what = fmt.Sprintf("chain %d of %d of a fit", m.Chain, m.Run.Chains)
	}
	verb := "fit"
	if m.Command == "run" {
		verb = "run"
	}
	return fmt.Errorf("%s holds %s, not a fit folder: merge the folders of every chain first with spillway %s --merge FOLDER... --out FOLDER", dir, what, verb)
}

// Same reports, for two shards' manifests, the first thing that differs
// between the fits they belong to ("" when they are chains of one fit):
// everything but the chain and its statistics must agree.
func Same(a, b Shard) string {
	switch {
	case a.Tool != b.Tool:
		return fmt.Sprintf("spillway versions differ: %s vs %s", a.Tool, b.Tool)
	case a.Command != b.Command:
		return fmt.Sprintf("one was sampled by spillway %s, the other by spillway %s", a.Command, b.Command)
	case a.Data != b.Data:
		return "the data differ (data.csv's SHA-256)"
	case a.Priors != b.Priors:
		return "the priors files differ"
	case a.LiftTests != b.LiftTests:
		return "the lift-test files differ"
	case a.Panel != b.Panel:
		return "one is a chain of a region panel, the other of a national fit"
	}
	ja, _ := json.Marshal(a.Run)
	jb, _ := json.Marshal(b.Run)
	if !bytes.Equal(ja, jb) {
		return "the settings differ: " + fieldDiff(ja, jb)
	}
	ja, _ = json.Marshal(a.Review)
	jb, _ = json.Marshal(b.Review)
	if !bytes.Equal(ja, jb) {
		return "run's options differ: " + fieldDiff(ja, jb)
	}
	return ""
}

// fieldDiff names the first top-level JSON field that differs between two
// objects, with both values.
func fieldDiff(a, b []byte) string {
	var ma, mb map[string]json.RawMessage
	_ = json.Unmarshal(a, &ma)
	_ = json.Unmarshal(b, &mb)
	keys := slices.Sorted(maps.Keys(ma))
	for k := range mb {
		if _, ok := ma[k]; !ok {
			keys = append(keys, k)
		}
	}
	for _, k := range keys {
		if !bytes.Equal(ma[k], mb[k]) {
			return fmt.Sprintf("%s %s vs %s", k, orNone(ma[k]), orNone(mb[k]))
		}
	}
	return fmt.Sprintf("%s vs %s", a, b)
}

func orNone(v json.RawMessage) string {
	if v == nil {
		return "none"
	}
	return string(v)
}
