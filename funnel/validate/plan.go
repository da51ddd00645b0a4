package validate

import (
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"sort"
	"spillway/funnel/lifts"
	"strconv"
	"strings"

	"spillway/funnel/data"
	"spillway/funnel/mcmc"
	"spillway/funnel/model"
	"spillway/funnel/pipeline"
	"spillway/funnel/window"
)

// The checks, in the order they run and are reported.
const (
	Recovery  = "recovery"
	Holdout   = "holdout"
	Stability = "stability"
	// Placebo refits with each channel's spend moved in time (placebo.go);
	// run only when asked for.
	Placebo = "placebo"
	// Reference is the check name of job 0, the fit to the whole data
	// that recovery simulates from and stability compares with.
	Reference = "reference"
)

// Checks lists the checks in report order.
var Checks = []string{Recovery, Holdout, Stability, Placebo}

// DefaultChecks are the checks an empty Settings.Checks runs.
var DefaultChecks = []string{Recovery, Holdout, Stability}

// Defaults of Settings. A refit is 4 chains of 500 warm-up and 1,000 kept
// draws: lighter than a full fit (warm-up halved), long enough that a
// refit of the demo converges by the rule of converge.go. Measured on the
// demo: with 2 x (500 + 500), 27 of the default sweep's 39 fits had an
// R-hat above 1.01, so no claim could ever be made; with 4 x (500 + 500)
// the largest R-hat of five fits was 1.004-1.010; with 4 x (500 + 1000)
// 1.002-1.005 and the smallest bulk ESS 1,150-1,370, at about 2.9 times
// the CPU of 2 x (500 + 500). R-hat from 4 chains is also a far less noisy
// check than from 2 (8 split halves against 4).
const (
	DefaultReplicates = 20
	DefaultOrigins    = 4
	DefaultHorizon    = 8
	DefaultSeeds      = 2
	DefaultChains     = 4
	DefaultWarmup     = 500
	DefaultDraws      = 1000
)

// NoSeeds as Settings.Seeds asks for no extra-seed refits.
const NoSeeds = -1

// The seasonal baseline forecasts week t as the same week a year earlier,
// y[t-BaselineLag], times the recent level: the mean of the LevelWeeks
// weeks before the origin over the mean of the same weeks a year before.
const (
	BaselineLag = 52
	LevelWeeks  = 8
)

// Settings configure a sweep. Every zero field means its documented
// default.
type Settings struct {
	// Checks lists the checks to run (Recovery, Holdout, Stability,
	// Placebo) in any order; empty means DefaultChecks.
	Checks []string `json:"checks"`
	// Replicates is the number of simulated data sets of the recovery
	// check. Zero means DefaultReplicates.
	Replicates int `json:"replicates"`
	// Origins is the number of forecast origins of the holdout check: the
	// last Origins*Horizon weeks are forecast in Origins blocks. Zero
	// means DefaultOrigins.
	Origins int `json:"origins"`
	// Horizon is the number of weeks forecast from each origin (1 to 52).
	// Zero means DefaultHorizon.
	Horizon int `json:"horizon"`
	// LeaveOut names the quarters ("2024Q2") the stability check leaves
	// out one at a time; nil means every quarter of the data.
	LeaveOut []string `json:"leave_out"`
	// LeaveOutRegions names the regions the stability check of a region
	// panel leaves out one at a time; nil means every region. Not used
	// without a panel.
	LeaveOutRegions []string `json:"leave_out_regions,omitempty"`
	// Seeds is the number of extra refits of the whole data with other
	// seeds (stability). Zero means DefaultSeeds; NoSeeds means none.
	Seeds int `json:"seeds"`
	// Chains, Warmup and Draws configure every refit (and the reference
	// fit when none is given). Zero means DefaultChains, DefaultWarmup and
	// DefaultDraws.
	Chains int `json:"chains"`
	Warmup int `json:"warmup"`
	Draws  int `json:"draws"`
	// Placebos is the number of placebo refits per channel (Placebo).
	// Zero means DefaultPlacebos when the placebo check runs.
	Placebos int `json:"placebos,omitempty"`
	// Seed is the sweep's seed. The reference fit uses it as a fit does
	// (demand Seed, outcome Seed+1); every other job i uses JobSeed(Seed, i).
	Seed uint64 `json:"seed"`
}

// resolved fills in the defaults and checks the values.
func (s Settings) resolved() (Settings, error) {
	r := s
	if len(r.Checks) == 0 {
		r.Checks = append([]string(nil), DefaultChecks...)
	}
	seen := map[string]bool{}
	for _, c := range r.Checks {
		if !slices.Contains(Checks, c) {
			return r, fmt.Errorf("validate: unknown check %q; expected recovery, holdout, stability or placebo", c)
		}
		seen[c] = true
	}
	r.Checks = nil
	for _, c := range Checks {
		if seen[c] {
			r.Checks = append(r.Checks, c)
		}
	}
	def := func(v *int, d int) {
		if *v == 0 {
			*v = d
		}
	}
	def(&r.Replicates, DefaultReplicates)
	def(&r.Origins, DefaultOrigins)
	def(&r.Horizon, DefaultHorizon)
	def(&r.Seeds, DefaultSeeds)
	def(&r.Chains, DefaultChains)
	def(&r.Warmup, DefaultWarmup)
	def(&r.Draws, DefaultDraws)
	if r.has(Placebo) {
		def(&r.Placebos, DefaultPlacebos)
	} else {
		r.Placebos = 0 // not in the manifest of a sweep without placebos
	}
	if r.Placebos < 0 {
		return r, fmt.Errorf("validate: placebos must not be negative")
	}
	if r.Seeds == NoSeeds {
		r.Seeds = 0
	}
	switch {
	case r.Replicates < 0 || r.Origins < 0 || r.Seeds < 0:
		return r, fmt.Errorf("validate: replicates, origins and seeds must not be negative")
	case r.Horizon < 1 || r.Horizon > BaselineLag:
		return r, fmt.Errorf("validate: horizon %d weeks, want 1 to %d", r.Horizon, BaselineLag)
	case r.Chains < 1 || r.Warmup < 1 || r.Draws < 10:
		return r, fmt.Errorf("validate: each refit needs at least 1 chain, 1 warm-up iteration and 10 draws")
	}
	if r.LeaveOut != nil {
		r.LeaveOut = append([]string{}, r.LeaveOut...)
	}
	if r.LeaveOutRegions != nil {
		r.LeaveOutRegions = append([]string{}, r.LeaveOutRegions...)
	}
	return r, nil
}

func (s Settings) has(check string) bool { return slices.Contains(s.Checks, check) }

// JobSeed returns the seed of job i (other than the reference) of a sweep with seed seed: the first
// output of PCG(seed, i). Neighbouring jobs get unrelated streams, and a
// job's seed depends on nothing but the sweep's seed and its index.
func JobSeed(seed uint64, i int) uint64 {
	return rand.New(rand.NewPCG(seed, uint64(i))).Uint64()
}

// Job is one refit of the sweep.
type Job struct {
	// Index is the job's position in the plan; the reference fit, when a
	// check needs it, is job 0.
	Index int `json:"index"`
	// Check is Reference, Recovery, Holdout or Stability.
	Check string `json:"check"`
	// Label says what the job does ("replicate 3", "origin 2025-06-02",
	// "without 2024Q2", "seed 2").
	Label string `json:"label"`
	// Seed seeds the job's fits (demand Seed, outcome Seed+1) and its
	// simulation noise.
	Seed uint64 `json:"seed,string"`
	// Replicate is the 1-based replicate number (recovery).
	Replicate int `json:"replicate,omitempty"`
	// Origin is the index of the first forecast week (holdout).
	Origin int `json:"origin,omitempty"`
	// Quarter is the quarter left out (stability); empty for a seed refit.
	Quarter string `json:"quarter,omitempty"`
	// Weeks is the number of weeks left out (stability); for a region
	// left out, the weeks whose share of the whole data matches the
	// region's share of the region-weeks (panel.go).
	Weeks int `json:"weeks,omitempty"`
	// Region is the region left out (stability of a region panel).
	Region string `json:"region,omitempty"`
	// Channel is the spend column moved and Shift the weeks it is moved
	// by (placebo).
	Channel string `json:"channel,omitempty"`
	Shift   int    `json:"shift,omitempty"`
}

// Input is what a sweep validates.
type Input struct {
	// Series is the national weekly series (raw units) and Spec its roles.
	Series data.Series
	Spec   data.Spec
	// Options are the model options every fit uses.
	Options model.Options
	// Lifts are lift tests fitted as data with Series (week indices into
	// it): every fit takes the tests of the weeks it fits (a holdout fit
	// those before its origin, a fit leaving a quarter out those outside
	// it), and a recovery replicate the same tests simulated from its
	// truth; placebo refits take none (their spend moved, the tests no
	// longer describe it). With a Panel a test may name a region
	// (lifts.LoadPanel); a panel fit leaving out a region takes neither
	// that region's tests nor the national ones (panel.go).
	Lifts []lifts.Test
	// Truth, if not nil, holds true parameter values in the model units of
	// Series (as truth.json from a simulation has them); the recovery
	// check then simulates every replicate from them instead of from
	// posterior draws.
	Truth *Truth
	// Reference, if not nil, is a fit of both stages to Series (for
	// instance a full fit read from a fit folder) to use as the posterior
	// instead of fitting one with the sweep's settings; with Panel, a fit
	// of the region model's two stages to the panel.
	Reference *Fits
	// Panel, if not nil, is a region panel of at least 2 regions, to be
	// validated with the region model (panel.go); Series must then be its
	// national sum (Panel.National()), which the quarters, the holdout's
	// summed forecasts and the manifest use. With a panel, Truth holds each
	// region's true parameters (Truth.Regions).
	Panel *data.Dataset
	// Tool names the program and its version in the manifest; shards of
	// one sweep must agree on it.
	Tool string
}

// Truth holds true parameter values by name, in model units.
type Truth struct {
	Demand, Outcome map[string]float64
	// Regions holds, for a region panel, each region's true parameters in
	// the model units of the region's own scaling (as truth.json from a
	// regional simulation has them), by region name.
	Regions map[string]*Truth
}

// Fits are fits of the demand and outcome stages.
type Fits struct {
	Demand, Outcome *mcmc.Fit
}

// Sweep is a planned validation sweep.
type Sweep struct {
	in       Input
	set      Settings
	base     *model.Scaled
	stages   [2]*model.Stage // built on base
	windows  []window.Window
	jobs     []Job
	skipped  []string
	gen      *generator
	manifest Manifest
	pan      *panelSweep // nil for a national sweep
	// tied: an upper-funnel channel's two paths drift together
	// (pipeline.DriftTies), so every refit is one joint fit of both stages
	tied bool
}

// New plans a sweep over in with settings s: it checks the settings
// against the data and lists the jobs. Errors are the user's (too few weeks
// for the holdout, an unknown quarter, a truth that lacks a parameter).
func New(in Input, s Settings) (*Sweep, error) {
	set, err := s.resolved()
	if err != nil {
		return nil, err
	}
	T := len(in.Series.Weeks)
	if T < 2 {
		return nil, fmt.Errorf("validate: the data have %d weeks", T)
	}
	sw := &Sweep{in: in, set: set}
	sw.base = model.Scale(in.Series, in.Spec)
	if sw.stages[0], err = model.Demand(sw.base, in.Options); err != nil {
		return nil, err
	}
	if sw.stages[1], err = model.Outcome(sw.base, in.Options); err != nil {
		return nil, err
	}
	for _, st := range sw.stages {
		if _, err := st.Target(); err != nil {
			return nil, fmt.Errorf("validate: %s stage: %w", st.Name, err)
		}
	}
	sw.windows = window.Quarters(in.Series.Weeks)
	sw.tied = len(pipeline.DriftTies(sw.stages[0], sw.stages[1], in.Options)) > 0
	if in.Panel != nil {
		if sw.pan, err = newPanel(in, set); err != nil {
			return nil, err
		}
	}
	if in.Reference != nil {
		for k, f := range []*mcmc.Fit{in.Reference.Demand, in.Reference.Outcome} {
			want, model := sw.stages[k].Names(), "model's"
			if sw.pan != nil {
				want, model = sw.pan.panels[k].Names(), "region model's"
			}
			if f == nil || !slices.Equal(f.Names, want) {
				return nil, fmt.Errorf("validate: the given %s fit does not match the %s parameters", sw.stages[k].Name, model)
			}
		}
	}
	if set.has(Recovery) && set.Replicates > 0 {
		if sw.pan != nil && in.Truth != nil {
			sw.gen, err = sw.pan.truthGenerator(in.Truth, in.Options)
			if err != nil {
				return nil, err
			}
		} else if sw.pan != nil {
			sw.gen = &generator{name: "posterior draws of the reference panel fit", fromPosterior: true}
		} else if in.Truth != nil {
			sw.gen, err = truthGenerator(sw, in.Truth)
			if err != nil {
				return nil, err
			}
		} else {
			sw.gen = posteriorGenerator(sw)
		}
	}
	if err := sw.plan(); err != nil {
		return nil, err
	}
	sw.manifest = sw.newManifest()
	return sw, nil
}

// needsReference reports whether any job uses the reference posterior:
// recovery from posterior draws, or stability with anything to refit.
func (sw *Sweep) needsReference() bool {
	s := sw.set
	stab := s.has(Stability) && (s.LeaveOut == nil || len(s.LeaveOut) > 0 || s.Seeds > 0 ||
		sw.pan != nil && (s.LeaveOutRegions == nil || len(s.LeaveOutRegions) > 0))
	plac := s.has(Placebo) && s.Placebos > 0
	return stab || plac || (sw.gen != nil && sw.gen.fromPosterior)
}

// plan lists the jobs in their fixed order: the reference (when a check
// needs it),
// the replicates, the origins, the left-out quarters, the seeds.
func (sw *Sweep) plan() error {
	s, in := sw.set, sw.in
	add := func(j Job) {
		j.Index = len(sw.jobs)
		if j.Check == Reference {
			j.Seed = s.Seed
		} else {
			j.Seed = JobSeed(s.Seed, j.Index)
		}
		sw.jobs = append(sw.jobs, j)
	}
	if sw.needsReference() {
		add(Job{Check: Reference, Label: "reference fit"})
	}
	if s.has(Recovery) {
		for r := 1; r <= s.Replicates; r++ {
			add(Job{Check: Recovery, Label: fmt.Sprintf("replicate %d", r), Replicate: r})
		}
	}
	T := len(in.Series.Weeks)
	if s.has(Holdout) && s.Origins > 0 {
		first := T - s.Origins*s.Horizon
		if need := BaselineLag + LevelWeeks; first < need {
			return fmt.Errorf("validate: %d origins of %d weeks need at least %d weeks of data (%d training weeks before the first origin: a year for the seasonal baseline plus %d weeks of level), the data have %d; use fewer origins or a shorter horizon",
				s.Origins, s.Horizon, need+s.Origins*s.Horizon, need, LevelWeeks, T)
		}
		for o := 0; o < s.Origins; o++ {
			origin := first + o*s.Horizon
			train := make([]bool, T)
			for t := range origin {
				train[t] = true
			}
			if why := trainable(in.Series, in.Spec, train); why != "" {
				return fmt.Errorf("validate: the weeks before %s cannot be fitted: %s", in.Series.Weeks[origin].Format(data.DateLayout), why)
			}
			if why := sw.holdoutReturns(origin + s.Horizon); why != "" {
				sw.skipped = append(sw.skipped, fmt.Sprintf("origin %s not run: %s", in.Series.Weeks[origin].Format(data.DateLayout), why))
				continue
			}
			add(Job{Check: Holdout, Label: "origin " + in.Series.Weeks[origin].Format(data.DateLayout), Origin: origin})
		}
	}
	if s.has(Stability) {
		quarters := sw.windows[1:]
		names := s.LeaveOut
		if names == nil {
			for _, q := range quarters {
				names = append(names, q.Name)
			}
		}
		for _, name := range names {
			i := slices.IndexFunc(quarters, func(w window.Window) bool { return w.Name == name })
			if i < 0 {
				var all []string
				for _, q := range quarters {
					all = append(all, q.Name)
				}
				return fmt.Errorf("validate: quarter %q is not in the data; the data have %s", name, strings.Join(all, ", "))
			}
			q := quarters[i]
			train := make([]bool, T)
			for t := range train {
				train[t] = t < q.From || t > q.To
			}
			if why := trainable(in.Series, in.Spec, train); why != "" {
				sw.skipped = append(sw.skipped, fmt.Sprintf("%s not left out: %s", name, why))
				continue
			}
			add(Job{Check: Stability, Label: "without " + name, Quarter: name, Weeks: q.To - q.From + 1})
		}
		if sw.pan != nil {
			for _, j := range sw.pan.regionJobs(s, T) {
				add(j)
			}
		}
		for k := 1; k <= s.Seeds; k++ {
			add(Job{Check: Stability, Label: fmt.Sprintf("seed %d", k)})
		}
	}
	if s.has(Placebo) {
		for c, col := range append(append([]string(nil), in.Spec.Upper...), in.Spec.Search...) {
			for _, k := range PlaceboShifts(JobSeed(s.Seed, -1-c), T, s.Placebos) {
				if c < len(in.Spec.Upper) {
					if why := sw.placeboReturns(c, col, k); why != "" {
						sw.skipped = append(sw.skipped, fmt.Sprintf("placebo %s moved %d weeks not run: %s", col, k, why))
						continue
					}
				}
				add(Job{Check: Placebo, Label: fmt.Sprintf("placebo %s moved %d weeks", col, k), Channel: col, Shift: k})
			}
		}
	}
	return nil
}

// trainable returns why the weeks marked in train cannot be fitted on their
// own ("" if they can): the scaling needs spend in some week of every
// channel, positive queries and outcome, and varying controls.
func trainable(s data.Series, spec data.Spec, train []bool) string {
	pick := func(x []float64) []float64 {
		var out []float64
		for t, v := range x {
			if train[t] {
				out = append(out, v)
			}
		}
		return out
	}
	n := 0
	for _, b := range train {
		if b {
			n++
		}
	}
	if n < 3 {
		return "fewer than 3 weeks"
	}
	for c, x := range s.Upper {
		if model.SpendScale(pick(x)) == 0 {
			return spec.Upper[c] + " has no spend in those weeks"
		}
	}
	for c, x := range s.Search {
		if model.SpendScale(pick(x)) == 0 {
			return spec.Search[c] + " has no spend in those weeks"
		}
	}
	for _, x := range [][]float64{s.Queries, s.Outcome} {
		sum := 0.0
		for _, v := range pick(x) {
			sum += v
		}
		if !(sum > 0) {
			return "queries or outcome are zero in those weeks"
		}
	}
	for k, z := range s.Controls {
		p := pick(z)
		if slices.Min(p) == slices.Max(p) {
			return "control " + spec.Controls[k] + " is constant in those weeks"
		}
	}
	return ""
}

// Jobs returns the planned jobs in index order.
func (sw *Sweep) Jobs() []Job { return append([]Job(nil), sw.jobs...) }

// Settings returns the resolved settings.
func (sw *Sweep) Settings() Settings { return sw.set }

// Shard selects part of a sweep: jobs whose index % N == I-1. The zero
// value means the whole sweep.
type Shard struct {
	I, N int
}

// ParseShard parses "i/n" with 1 <= i <= n.
func ParseShard(s string) (Shard, error) {
	a, b, ok := strings.Cut(s, "/")
	i, err1 := strconv.Atoi(a)
	n, err2 := strconv.Atoi(b)
	if !ok || err1 != nil || err2 != nil || n < 1 || i < 1 || i > n {
		return Shard{}, fmt.Errorf("shard %q: expected i/n with 1 <= i <= n, such as 3/8", s)
	}
	return Shard{I: i, N: n}, nil
}

// String returns "i/n", or "" for the whole sweep.
func (s Shard) String() string {
	if s.N <= 1 {
		return ""
	}
	return fmt.Sprintf("%d/%d", s.I, s.N)
}

// owns reports whether job index j belongs to the shard.
func (s Shard) owns(j int) bool {
	if s.N <= 1 {
		return true
	}
	return j%s.N == s.I-1
}

// fingerprint hashes numbers and strings into a short hex digest.
type fingerprint struct{ h []byte }

func (f *fingerprint) num(v float64) {
	f.h = binary.LittleEndian.AppendUint64(f.h, math.Float64bits(v))
}

func (f *fingerprint) str(s string) {
	f.h = binary.LittleEndian.AppendUint64(f.h, uint64(len(s)))
	f.h = append(f.h, s...)
}

func (f *fingerprint) sum() string {
	d := sha256.Sum256(f.h)
	return hex.EncodeToString(d[:])
}

// seriesID fingerprints the data: weeks, every series and the roles.
func seriesID(s data.Series, spec data.Spec) string {
	var f fingerprint
	for _, w := range s.Weeks {
		f.str(w.Format(data.DateLayout))
	}
	for _, cols := range [][][]float64{s.Upper, s.Search, {s.Queries, s.Outcome}, s.Controls} {
		for _, x := range cols {
			for _, v := range x {
				f.num(v)
			}
		}
	}
	for _, c := range spec.Columns() {
		f.str(c)
	}
	return f.sum()
}

// optionsID describes the model options in a stable text.
func optionsID(o model.Options) string {
	var parts []string
	// the columns a set switches on, sorted
	on := func(set map[string]bool) []string {
		var cols []string
		for c, yes := range set {
			if yes {
				cols = append(cols, c)
			}
		}
		sort.Strings(cols)
		return cols
	}
	if lin := on(o.Linear); len(lin) > 0 {
		parts = append(parts, "linear="+strings.Join(lin, ","))
	}
	var names []string
	for n := range o.Priors {
		names = append(names, n)
	}
	sort.Strings(names)
	for _, n := range names {
		p := o.Priors[n]
		parts = append(parts, fmt.Sprintf("prior %s=%s(%s,%s)", n, p.Family,
			strconv.FormatFloat(p.P1, 'g', -1, 64), strconv.FormatFloat(p.P2, 'g', -1, 64)))
	}
	if o.Plain {
		parts = append(parts, "plain")
	}
	if drift := on(o.Drift); len(drift) > 0 {
		parts = append(parts, "drift="+strings.Join(drift, ","))
		if o.DriftShape == model.DriftJumps {
			parts = append(parts, "drift shape="+o.DriftShape)
		}
	}
	if o.Baseline != "" {
		parts = append(parts, "baseline="+o.Baseline)
	}
	parts = append(parts, returnsID(o)...)
	if len(parts) == 0 {
		return "default"
	}
	return strings.Join(parts, "; ")
}

// fitID fingerprints the draws of fits.
func fitID(fits ...*mcmc.Fit) string {
	var f fingerprint
	for _, fit := range fits {
		for _, n := range fit.Names {
			f.str(n)
		}
		for _, c := range fit.Chains {
			for _, v := range c.Draws.RawMatrix().Data {
				f.num(v)
			}
		}
	}
	return f.sum()
}
