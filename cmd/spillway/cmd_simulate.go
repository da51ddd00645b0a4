package main

import (
	"bytes"
	"context"
	"fmt"
	"io"

	"github.com/spf13/pflag"

	"spillway/funnel/data"
	"spillway/funnel/scenario"
)

// DemoSeed is the seed of the built-in demo data.
const DemoSeed = 1

// simulateOptions are the flags of spillway simulate.
type simulateOptions struct {
	scenario, out  string
	seed           uint64
	weeks, regions int
	force          bool
}

func (o *simulateOptions) addFlags(fs *pflag.FlagSet) {
	fs.StringVar(&o.scenario, "scenario", "demo", "the `SCENARIO`: demo, demo-regions, slow-burn, direct-audio, exposure-rising, exposure-break, exposure-error or reach-frequency")
	fs.Uint64Var(&o.seed, "seed", DemoSeed, "random seed")
	fs.IntVar(&o.weeks, "weeks", 0, "number of weeks (0: the scenario's own, 156)")
	fs.IntVar(&o.regions, "regions", 0, "number of regions (0: the scenario's own; demo-regions has 24)")
	fs.StringVar(&o.out, "out", "", "the output `FOLDER` for data.csv and truth.json")
	fs.BoolVar(&o.force, "force", false, "replace the output folder if it exists and spillway wrote it (never one holding an input or files spillway did not write)")
}

// newSimulateCommand builds spillway simulate.
func newSimulateCommand() *command {
	var opts simulateOptions
	fs := newFlagSet("simulate")
	opts.addFlags(fs)
	return &command{
		name:  "simulate",
		usage: "simulate --scenario NAME --out FOLDER [flags]",
		short: "write a synthetic scenario and its ground truth",
		long: `Simulate draws weekly data from the model with known parameters and writes
FOLDER/data.csv and FOLDER/truth.json: the true parameters (in the units the
model fits in) and the true effects of each upper-funnel channel (via search,
direct, total, mediated share, per unit of spend; whole period and each
quarter) and of paid search (controlled, apparent, borrowed share), computed
by the same code that computes fitted effects.
The scenarios are invented: Quillmere Bikes, a fictional brand, buys video,
audio and paid search; its paid-search spend partly follows branded query
volume, as auction spend does, so a model without queries over-credits search.
  demo             156 weeks, national (the data 'spillway run' uses by default)
  demo-regions     the demo across 24 regions with populations
  slow-burn        long carryover, strong saturation, mostly mediated video
  direct-audio     audio works with no mediation at all; video about 7% mediated
  exposure-rising  video works through its impressions (video_kimpressions,
                   thousands), whose cost per thousand rises 30% over the
                   three years; fit with
                   --exposure video_spend=video_kimpressions
  exposure-break   as exposure-rising, and from week 79 the impressions are
                   counted 1.6 times as generously (a new way of measuring);
                   add --exposure-break video_spend=2024-07-01
  exposure-error   as exposure-rising, each week's impressions off by a
                   factor exp(0.25 e), e standard normal; add
                   --exposure-error video_spend=0.25
  reach-frequency  video given as weekly reach (video_reach) and average
                   frequency (video_frequency); the response per person
                   reached levels off after about 2 exposures; fit with
                   --reach video_spend=video_reach
                   --frequency video_spend=video_frequency

EXAMPLE
  spillway simulate --scenario demo-regions --seed 7 --out sim7

` + exitStatusHelp,
		flags: fs,
		run: func(ctx context.Context, args []string, stdout, stderr io.Writer) error {
			return runSimulate(ctx, &opts, args, stdout, stderr)
		},
	}
}

// runSimulate writes a scenario's data.csv and truth.json.
func runSimulate(_ context.Context, o *simulateOptions, args []string, stdout, stderr io.Writer) error {
	if err := noArgs(args); err != nil {
		return err
	}
	if o.regions < 0 || o.weeks < 0 {
		return usagef("--weeks and --regions must not be negative")
	}
	if o.scenario == "demo" && o.regions > 0 {
		return usagef("--regions needs a regional scenario (demo-regions)")
	}
	od, err := newOutDir(o.out, o.force)
	if err != nil {
		return err
	}
	defer od.Abort()
	dropNote(stderr, od)
	sc, err := scenario.Named(o.scenario, o.seed, o.weeks, o.regions)
	if err != nil {
		return usagef("%v", err)
	}
	csv, truth, err := simulateFiles(sc)
	if err != nil {
		return err
	}
	if err := od.WriteFile("data.csv", csv); err != nil {
		return err
	}
	if err := od.WriteFile("truth.json", truth); err != nil {
		return err
	}
	if err := od.Commit(); err != nil {
		return err
	}
	fmt.Fprintf(stdout, "wrote %s/data.csv and %s/truth.json (scenario %s, seed %d, %d weeks)\n", od.Final(), od.Final(), o.scenario, o.seed, sc.Weeks)
	return nil
}

// simulateFiles renders a scenario's data.csv and truth.json.
func simulateFiles(sc *scenario.Scenario) ([]byte, []byte, error) {
	res, err := sc.Simulate()
	if err != nil {
		return nil, nil, err
	}
	truth, err := sc.Truth(res)
	if err != nil {
		return nil, nil, err
	}
	var a, b bytes.Buffer
	if err := data.WriteCSV(&a, res.Data); err != nil {
		return nil, nil, err
	}
	if err := truth.WriteJSON(&b); err != nil {
		return nil, nil, err
	}
	return a.Bytes(), b.Bytes(), nil
}

// demoData returns the built-in demo scenario's data, regenerated
// deterministically (it equals testdata/demo/data.csv byte for byte; a test
// holds it to that).
func demoData(name string) (*data.Dataset, error) {
	sc, err := scenario.Named(name, DemoSeed, 0, 0)
	if err != nil {
		return nil, err
	}
	csv, _, err := simulateFiles(sc)
	if err != nil {
		return nil, err
	}
	spec := sc.Roles()
	spec.Data = "demo:" + name
	return data.Read(bytes.NewReader(csv), spec.Data, spec)
}
