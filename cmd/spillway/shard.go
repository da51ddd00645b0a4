package main

import (
	"context"
	"fmt"
	"io"
	"path/filepath"
	"slices"
	"strconv"
	"strings"

	"github.com/spf13/pflag"

	"spillway/funnel/fitfolder"
	"spillway/funnel/lifts"
	"spillway/funnel/mcmc"
	"spillway/funnel/model"
	"spillway/funnel/pipeline"
)

// shardFlags are fit's and run's --chain and --merge: a fit's chains
// sampled as separate jobs (one chain each, its own shard folder), then
// merged into the folder one run writes. They are spelled as validate's
// --shard I/N and --merge FOLDER...; the unit here is a chain, so the flag
// says so, and N is the number of chains.
type shardFlags struct {
	chain string
	merge bool
	fs    *pflag.FlagSet // for which flags were given
}

func (s *shardFlags) addFlags(fs *pflag.FlagSet) {
	s.fs = fs
	fs.StringVar(&s.chain, "chain", "", "sample only chain `I/N` of N (each stage's chain I, as in a run of N chains) into --out, a shard folder for --merge")
	fs.BoolVar(&s.merge, "merge", false, "merge the shard folders of every chain, given as arguments, into --out: the folder one run of all chains writes")
}

// chains parses --chain I/N: it returns the chain to sample (0-based, as
// mcmc.Settings.Only) and sets the number of chains to N; nil without
// --chain. --chains, if given too, must be N.
func (s *shardFlags) chains(opts *samplingFlags) ([]int, error) {
	if s.chain == "" {
		return nil, nil
	}
	a, b, ok := strings.Cut(s.chain, "/")
	i, err1 := strconv.Atoi(a)
	n, err2 := strconv.Atoi(b)
	if !ok || err1 != nil || err2 != nil || n < 1 || i < 1 || i > n {
		return nil, usagef("--chain %q: expected I/N with 1 <= I <= N, such as 3/4", s.chain)
	}
	if n > 64 {
		return nil, usagef("--chain %s: more than 64 chains", s.chain)
	}
	if s.fs != nil && s.fs.Changed("chains") && opts.chains != n {
		return nil, usagef("--chain %s samples one chain of %d, but --chains is %d; leave --chains out or make it %d", s.chain, n, opts.chains, n)
	}
	opts.chains = n
	return []int{i - 1}, nil
}

// writeShard writes the shard folder of one chain into od: the fit's
// record, the data and input copies, each stage's draws and statistics.
// draws and walls are the chain's stages in the order of the shard's
// StageNames: a national fit's three and the support check's baseline
// (whose wall time pipeline does not report: give 0), or a region panel's
// three.
func writeShard(od *outDir, p *fitPlan, draws []*mcmc.Fit, walls []float64, review *fitfolder.Review, stdout io.Writer) (*fitRun, error) {
	run := p.run
	run.Command = ""
	cmd := "fit"
	if review != nil {
		cmd = "run"
	}
	m := fitfolder.Shard{Tool: spillwayVersion(), Command: cmd, Chain: p.set.Only[0] + 1, Run: run, Review: review, Panel: p.panel != nil}
	for k, name := range m.StageNames() {
		m.Stages = append(m.Stages, fitfolder.ShardStageOf(name, draws[k], walls[k]))
	}
	if !m.Panel {
		// the baseline stage's wall time is not reported by pipeline; its
		// sampler's own times stand for it
		b := m.Stages[len(m.Stages)-1]
		m.Stages[len(m.Stages)-1].WallSeconds = b.WarmupSeconds + b.SamplingSeconds
	}
	sf, err := fitfolder.NewShardFolder(m, &fitfolder.Data{Dataset: p.ds}, p.priorBytes, p.liftBytes, draws)
	if err != nil {
		return nil, err
	}
	files, err := sf.Files()
	if err != nil {
		return nil, err
	}
	for name, b := range files {
		if err := od.WriteFile(name, b); err != nil {
			return nil, err
		}
	}
	chain := fmt.Sprintf("%d/%d", m.Chain, run.Chains)
	for _, s := range m.Stages {
		fmt.Fprintf(stdout, "%-8s chain %s: %d draws in %.1f s, %d divergences, step size %.3g, %.0f leapfrog steps per draw\n",
			s.Name, chain, run.Draws, s.WallSeconds, s.Divergences, s.StepSize, s.MeanLeapfrogs)
	}
	return &fitRun{outDir: od, chain: chain}, nil
}

// printShardWritten says where a chain went and how to merge the chains.
func printShardWritten(stdout io.Writer, od *fitRun, verb string) {
	fmt.Fprintf(stdout, "chain %s written to %s; when every chain is done, merge them with\n  spillway %s --merge FOLDER... --out FOLDER\n", od.chain, od.Final(), verb)
}

// mergeFit merges the shard folders args, one per chain of one fit, into
// the folder the fit's single run writes: verb is fit or run, the command
// that sampled the chains. Only --out, --force and --quiet may be given:
// the shards fix everything else.
func mergeFit(ctx context.Context, verb string, opts *samplingFlags, args []string, stdout, stderr io.Writer) (err error) {
	if len(args) == 0 {
		return usagef("--merge needs the shard folders as arguments")
	}
	var extra []string
	opts.shard.fs.VisitAll(func(f *pflag.Flag) {
		switch {
		case !f.Changed:
		case f.Name == "merge" || f.Name == "out" || f.Name == "force" || f.Name == "quiet":
		default:
			extra = append(extra, "--"+f.Name)
		}
	})
	if len(extra) > 0 {
		return usagef("--merge takes only shard folders, --out and --force; the shards already fix %s", strings.Join(extra, ", "))
	}
	od, err := newOutDir(opts.out, opts.force, args...)
	if err != nil {
		return err
	}
	defer od.Abort()
	dropNote(stderr, od)
	shards, err := readShards(verb, args)
	if err != nil {
		return err
	}
	fr, err := mergedFit(ctx, od, shards, opts, stdout, stderr)
	if err != nil {
		return err
	}
	if verb == "run" {
		return finishRun(ctx, fr, shards[0].Manifest.Review, stdout, stderr)
	}
	if err := od.Commit(); err != nil {
		return err
	}
	fmt.Fprintf(stdout, "fit written to %s\n", od.Final())
	return nil
}

// readShards reads the shard folders dirs and checks that they are the
// chains of one fit sampled by verb, each chain exactly once; it returns
// them in chain order. Problems are bad data naming the folder.
func readShards(verb string, dirs []string) ([]*fitfolder.ShardFolder, error) {
	var shards []*fitfolder.ShardFolder
	for _, d := range dirs {
		s, err := fitfolder.ReadShard(d)
		if err != nil {
			return nil, badData(err)
		}
		if c := s.Manifest.Command; c != verb {
			return nil, badData(fmt.Errorf("%s holds a chain sampled by spillway %s; merge it with spillway %s --merge", d, c, c))
		}
		if len(shards) > 0 {
			if why := fitfolder.Same(shards[0].Manifest, s.Manifest); why != "" {
				return nil, badData(fmt.Errorf("%s and %s are chains of different fits (%s); merge the chains of one fit only", shards[0].Dir, d, why))
			}
		}
		shards = append(shards, s)
	}
	n := shards[0].Manifest.Run.Chains
	owner := map[int]string{}
	for _, s := range shards {
		c := s.Manifest.Chain
		if prev, ok := owner[c]; ok {
			return nil, badData(fmt.Errorf("chain %d of %d is in both %s and %s", c, n, prev, s.Dir))
		}
		owner[c] = s.Dir
	}
	var missing []string
	for c := 1; c <= n; c++ {
		if _, ok := owner[c]; !ok {
			missing = append(missing, strconv.Itoa(c))
		}
	}
	if len(missing) > 0 {
		return nil, badData(fmt.Errorf("%d of %d chains are missing: chain %s; merge the folders of every chain", len(missing), n, strings.Join(missing, ", ")))
	}
	slices.SortFunc(shards, func(a, b *fitfolder.ShardFolder) int { return a.Manifest.Chain - b.Manifest.Chain })
	return shards, nil
}

// shardChains returns each stage's chains of shards in order, and each
// stage's wall time: its slowest chain's, what the user waited with every
// job running at once.
func shardChains(shards []*fitfolder.ShardFolder) ([]*mcmc.Fit, []float64) {
	first := shards[0]
	names := first.Manifest.StageNames()
	fits := make([]*mcmc.Fit, len(names))
	wall := make([]float64, len(names))
	for k := range names {
		fits[k] = &mcmc.Fit{Names: first.Draws[k].Names}
		for _, s := range shards {
			fits[k].Chains = append(fits[k].Chains, s.Draws[k].Chains[0])
			wall[k] = max(wall[k], s.Manifest.Stages[k].WallSeconds)
		}
	}
	return fits, wall
}

// mergedPanel is mergedFit for the chains of a region panel.
func mergedPanel(ctx context.Context, od *outDir, p *fitPlan, shards []*fitfolder.ShardFolder, opts *samplingFlags, stdout, stderr io.Writer) (*fitRun, error) {
	first := shards[0]
	var err error
	if p.panel, err = model.ScalePanel(p.ds, nil); err != nil {
		return nil, badData(fmt.Errorf("%s: %w", filepath.Join(first.Dir, "data.csv"), err))
	}
	p.sc = p.panel.Scaled[0]
	c := pipeline.Choices{Linear: p.run.Linear, Drift: p.run.Drift, DriftShape: p.run.DriftShape, Baseline: p.run.Baseline}
	if first.Priors != nil {
		c.Priors = filepath.Join(first.Dir, "priors.csv")
	}
	if p.o, err = c.Options(p.sc); err != nil {
		return nil, badData(err)
	}
	fits, wall := shardChains(shards)
	for _, s := range shards {
		for j := range fits {
			if got, want := s.Draws[j].Names, fits[j].Names; !slices.Equal(got, want) {
				return nil, badData(fmt.Errorf("%s: parameters %v differ from %s's %v", filepath.Join(s.Dir, fitfolder.PanelShardStages[j], "draws.csv"), got, first.Dir, want))
			}
		}
	}
	if first.LiftTests != nil {
		if p.tests, err = lifts.LoadPanel(filepath.Join(first.Dir, fitfolder.LiftTestsFile), p.ds); err != nil {
			return nil, badData(err)
		}
	}
	pf, err := pipeline.AssemblePanelLifts(p.panel, p.o, p.tests, p.set, [3]*mcmc.Fit(fits), [3]float64(wall))
	if err != nil {
		return nil, badData(fmt.Errorf("%s: %w", first.Dir, err))
	}
	ff, err := finishPanelFit(ctx, od, p, pf, progressHook(ctx, opts, 0, stderr), stdout, stderr)
	if err != nil {
		return nil, err
	}
	return &fitRun{outDir: od, fit: ff}, nil
}

// mergedFit puts the chains of shards (in chain order) together and writes
// the fit folder into od as the single run of all chains would.
func mergedFit(ctx context.Context, od *outDir, shards []*fitfolder.ShardFolder, opts *samplingFlags, stdout, stderr io.Writer) (*fitRun, error) {
	first := shards[0]
	m := first.Manifest
	p := &fitPlan{run: m.Run, ds: first.Data.Dataset, priorBytes: first.Priors, liftBytes: first.LiftTests}
	p.run.Command = rerunCommand(rerunVerb(&p.run), &p.run, od.Final())
	p.set = mcmc.Settings{Chains: m.Run.Chains, Warmup: m.Run.Warmup, Draws: m.Run.Draws, Seed: m.Run.Seed, TargetAccept: m.Run.Accept}
	if m.Panel != isPanel(m.Run, p.ds) {
		return nil, badData(fmt.Errorf("%s: the shard's panel setting does not match its data and settings", filepath.Join(first.Dir, fitfolder.ShardFile)))
	}
	if m.Panel {
		return mergedPanel(ctx, od, p, shards, opts, stdout, stderr)
	}
	p.sc = model.Scale(p.ds.National(), p.ds.Spec)
	c := pipeline.Choices{Linear: m.Run.Linear, Drift: m.Run.Drift, DriftShape: m.Run.DriftShape, Baseline: m.Run.Baseline}
	if first.Priors != nil {
		c.Priors = filepath.Join(first.Dir, "priors.csv")
	}
	var err error
	if p.o, err = c.Options(p.sc); err != nil {
		return nil, badData(err)
	}
	if first.LiftTests != nil {
		if p.tests, err = lifts.Load(filepath.Join(first.Dir, fitfolder.LiftTestsFile), p.ds); err != nil {
			return nil, badData(err)
		}
	}
	fits, wall := shardChains(shards)
	fitted, err := pipeline.Assemble(p.sc, p.o, p.tests, p.set, [3]*mcmc.Fit(fits[:3]), [3]float64(wall[:3]))
	if err != nil {
		return nil, err
	}
	base, err := model.Baseline(p.sc, p.o)
	if err != nil {
		return nil, err
	}
	stages := append(fitted.Stages[:], base)
	for k, name := range fitfolder.ShardStages {
		for _, s := range shards {
			if got, want := s.Draws[k].Names, stages[k].Names(); !slices.Equal(got, want) {
				return nil, badData(fmt.Errorf("%s: parameters %v do not match the model's %v",
					filepath.Join(s.Dir, name, "draws.csv"), got, want))
			}
		}
	}
	ff, err := finishFit(ctx, od, p, fitted, base, fits[3], progressHook(ctx, opts, 0, stderr), stdout, stderr)
	if err != nil {
		return nil, err
	}
	return &fitRun{outDir: od, fit: ff}, nil
}
