package pipeline

import (
	"context"
	"fmt"
	"os"
	"strconv"
	"strings"
	"testing"
	"time"

	"spillway/funnel/mcmc"
	"spillway/funnel/model"
	"spillway/funnel/scenario"
)

// BenchmarkPanelFit is issue 12's speed case: the demand and outcome stages
// of a panel simulated from the region model, 40 regions x 156 weeks (two
// upper channels, one paid search, one control; the last of every eight
// regions never runs audio, the first is ten times the others' size), 4
// chains x (1000 + 1000), the coordinates and start FitPanel chooses
// (SPILLWAY_PANEL_START=identity: the sampler's usual start instead, the
// identity metric and uniform initial points). Per stage it
// logs wall and CPU (user + system) seconds, the load average beside them,
// the worst R-hat and the least bulk and tail ESS over every parameter,
// divergences, leapfrog steps per draw, step size and gradient evaluations
// (warm-up and sampling, and per warm-up stretch between metric updates,
// summed over the chains);
// it reports the total wall, the total CPU seconds, their half (the wall
// two idle cores would take, the chains running two at a time) and the
// peak resident memory. SPILLWAY_PANEL_BENCH=G,T[,warmup,draws] sets
// another size or chain length (the 200 x 156 run:
// SPILLWAY_PANEL_BENCH=200,156); SPILLWAY_PANEL_STAGES=0, 1 or 2 runs the
// demand, the outcome or the naive stage alone (each stage has its own
// seed, so stages run apart give the figures of one run of them; the
// default runs demand and outcome). SPILLWAY_PANEL_MEMORY=1
// measures memory only: no warm-up and trajectories of at most two leapfrog
// steps, so a run keeps as many draws as a real one (the draws, the summary
// and the targets are what take memory) at a small fraction of its time;
// its convergence figures mean nothing. To compare coordinates on other
// data: SPILLWAY_PANEL_SEED sets the simulation's seed (default 40),
// SPILLWAY_PANEL_SCALE the national totals the regions share as a
// multiple of the demo's (default G/40, so every region is the size of a
// 40-region panel's; 1 splits the demo's totals, about 11 conversions a
// week a region at 200, scenario.PanelOptions.Scale),
// SPILLWAY_PANEL_RUN_SEED offsets the sampler's, and
// SPILLWAY_PANEL_COEF=rounded samples the channels' coefficients with the
// rounded weights instead of their conditional coordinates, =ownspread
// references theirs to each region's own response spread
// (model.Coords.CoefOwnSpread);
// SPILLWAY_PANEL_ACCEPT sets the target acceptance (default each stage's,
// as FitPanel's: PanelSettings) and SPILLWAY_PANEL_WARMUP_ACCEPT the
// warm-up's own until its last metric update (mcmc.Settings.WarmupAccept;
// 0 for none); SPILLWAY_PANEL_BASELINE=smooth fits the baseline that
// moves (model.BaselineSmooth) in place of the trend line;
// SPILLWAY_PANEL_DENSE=1 adapts one dense metric block over the shared
// coordinates (mcmc.Settings.DenseBlock, model.PanelTarget.SharedCoords).
func BenchmarkPanelFit(b *testing.B) {
	G, T, warm, draws := 40, 156, 1000, 1000
	var err error
	if s := os.Getenv("SPILLWAY_PANEL_BENCH"); s != "" {
		f := strings.Split(s, ",")
		v := []*int{&G, &T, &warm, &draws}
		for i := range f {
			if i >= len(v) {
				break
			}
			n, err := strconv.Atoi(f[i])
			if err != nil || n < 1 {
				b.Fatalf("SPILLWAY_PANEL_BENCH=%s: want G,T[,warmup,draws]", s)
			}
			*v[i] = n
		}
	}
	memOnly := os.Getenv("SPILLWAY_PANEL_MEMORY") == "1"
	stages := "01"
	if s := os.Getenv("SPILLWAY_PANEL_STAGES"); s != "" {
		for _, ch := range s {
			if ch < '0' || ch > '2' {
				b.Fatalf("SPILLWAY_PANEL_STAGES=%s: want stage numbers, 0 demand, 1 outcome and 2 naive", s)
			}
		}
		stages = s
	}
	accept := 0.0 // each stage's default, as FitPanel's
	if s := os.Getenv("SPILLWAY_PANEL_ACCEPT"); s != "" {
		if accept, err = strconv.ParseFloat(s, 64); err != nil || accept <= 0 || accept >= 1 {
			b.Fatalf("SPILLWAY_PANEL_ACCEPT=%s: want a target acceptance between 0 and 1", s)
		}
	}
	seed, runSeed := uint64(40), uint64(0)
	if s := os.Getenv("SPILLWAY_PANEL_RUN_SEED"); s != "" {
		// the sampler's seed, offset from the stage's
		if runSeed, err = strconv.ParseUint(s, 10, 64); err != nil {
			b.Fatalf("SPILLWAY_PANEL_RUN_SEED=%s: want a whole number", s)
		}
	}
	if s := os.Getenv("SPILLWAY_PANEL_SEED"); s != "" {
		if seed, err = strconv.ParseUint(s, 10, 64); err != nil {
			b.Fatalf("SPILLWAY_PANEL_SEED=%s: want a whole number", s)
		}
	}
	scale := float64(G) / 40 // every region the size of a 40-region panel's
	if s := os.Getenv("SPILLWAY_PANEL_SCALE"); s != "" {
		if scale, err = strconv.ParseFloat(s, 64); err != nil || !(scale > 0) {
			b.Fatalf("SPILLWAY_PANEL_SCALE=%s: want a positive number", s)
		}
	}
	sim, err := scenario.SimulatePanel(scenario.PanelOptions{Regions: G, Weeks: T, Seed: seed, Dark: G / 8, Big: true, Scale: scale})
	if err != nil {
		b.Fatal(err)
	}
	ps, err := model.ScalePanel(sim.Data, nil)
	if err != nil {
		b.Fatal(err)
	}
	var opts model.Options
	switch s := os.Getenv("SPILLWAY_PANEL_BASELINE"); s {
	case "":
	case model.BaselineSmooth:
		opts.Baseline = s
	default:
		b.Fatalf("SPILLWAY_PANEL_BASELINE=%s: want %s", s, model.BaselineSmooth)
	}
	panels, err := model.PanelStages(ps, opts)
	if err != nil {
		b.Fatal(err)
	}
	for b.Loop() {
		wall, cpu, grads := 0.0, 0.0, 0
		for _, ch := range stages {
			k := int(ch - '0')
			p := panels[k]
			tc := time.Now()
			if p.Coords, err = model.ChooseCoordinates(p); err != nil {
				b.Fatal(err)
			}
			fmt.Fprintf(os.Stderr, "%s: least squares' transforms %v (%.2f s to choose the coordinates)\n", StageNames[k], p.Coords.Transforms, time.Since(tc).Seconds())
			switch os.Getenv("SPILLWAY_PANEL_COEF") {
			case "rounded":
				p.Coords.CoefConditional = false // the channels' rounded weights
			case "ownspread":
				p.Coords.CoefOwnSpread = true // each region's own response spread
			}
			tg, err := p.Target()
			if err != nil {
				b.Fatal(err)
			}
			set := PanelSettings(mcmc.Settings{Warmup: warm, Draws: draws, Seed: 60 + runSeed, TargetAccept: accept}, k)
			if v := os.Getenv("SPILLWAY_PANEL_WARMUP_ACCEPT"); v != "" {
				// 0: the stage's target throughout the warm-up, as before WarmupAccept
				if set.WarmupAccept, err = strconv.ParseFloat(v, 64); err != nil {
					b.Fatalf("SPILLWAY_PANEL_WARMUP_ACCEPT=%s: %v", v, err)
				}
			}
			if os.Getenv("SPILLWAY_PANEL_START") != "identity" {
				set = PanelStart(tg, set)
			}
			if os.Getenv("SPILLWAY_PANEL_DENSE") == "1" {
				set.DenseBlock = tg.SharedCoords()
				fmt.Fprintf(os.Stderr, "dense metric block of %d shared coordinates\n", len(set.DenseBlock))
			}
			if memOnly {
				set.Warmup, set.MaxTreeDepth = mcmc.NoWarmup, 1
			}
			c0, _ := usage()
			t0 := time.Now()
			fit, err := mcmc.Run(context.Background(), tg, &set)
			if err != nil {
				b.Fatal(err)
			}
			w := time.Since(t0).Seconds()
			c1, _ := usage()
			g, gw := 0, 0
			stretches := make([]mcmc.WarmupStretch, len(fit.Chains[0].Stats.Warmup))
			for _, c := range fit.Chains {
				g += c.Stats.GradientEvaluations
				gw += c.Stats.WarmupGradients
				for i, w := range c.Stats.Warmup {
					if i < len(stretches) {
						s := &stretches[i]
						s.Start, s.Iterations = w.Start, s.Iterations+w.Iterations
						s.Gradients += w.Gradients
						s.TreeDepthHits += w.TreeDepthHits
						s.Divergences += w.Divergences
						s.MeanTreeDepth += w.MeanTreeDepth / float64(len(fit.Chains))
						s.MeanStepSize += w.MeanStepSize / float64(len(fit.Chains))
					}
				}
			}
			wall, cpu, grads = wall+w, cpu+c1-c0, grads+g
			line := fmt.Sprintf("%d x %d, 4 x (%d + %d), target acceptance %g%s: %v\n  cpu %.1f s (2 idle cores: ~%.1f s wall), %d gradients (%d warm-up, %d sampling; %.0f us cpu each), load average %s",
				G, T, warm, draws, set.TargetAccept, warmAccept(set), diagnose(StageNames[k], fit, w), c1-c0, (c1-c0)/2, g, gw, g-gw, 1e6*(c1-c0)/float64(g), loadAverage())
			for _, s := range stretches {
				line += fmt.Sprintf("\n  warm-up from iteration %4d: %6d gradients (%4.0f per iteration), mean depth %.2f, step %.4f, %d at the maximum depth, %d divergent",
					s.Start, s.Gradients, float64(s.Gradients)/float64(s.Iterations), s.MeanTreeDepth, s.MeanStepSize, s.TreeDepthHits, s.Divergences)
			}
			b.Log(line)
			fmt.Fprintln(os.Stderr, line) // at once: a long run's log lines otherwise wait for its end
		}
		_, peak := usage()
		b.ReportMetric(wall, "wall-s")
		b.ReportMetric(cpu, "cpu-s")
		b.ReportMetric(cpu/2, "cpu/2-s")
		b.ReportMetric(float64(grads), "gradients")
		b.ReportMetric(float64(peak)/(1<<20), "peak-MB")
	}
}

// warmAccept describes the warm-up's own target acceptance, if any.
func warmAccept(s mcmc.Settings) string {
	if s.WarmupAccept == 0 {
		return ""
	}
	return fmt.Sprintf(" (%g until the warm-up's last metric update)", s.WarmupAccept)
}

// loadAverage returns the 1, 5 and 15 minute load averages, or "?" where
// /proc/loadavg cannot be read.
func loadAverage() string {
	b, err := os.ReadFile("/proc/loadavg")
	if err != nil {
		return "?"
	}
	f := strings.Fields(string(b))
	if len(f) < 3 {
		return "?"
	}
	return fmt.Sprintf("%s %s %s", f[0], f[1], f[2])
}
