package mcmc_test

import (
	"context"
	"math"
	"testing"
	"time"

	"spillway/funnel/mcmc"
)

// benchESS runs m with the default settings (4 chains, 1000 + 1000) and
// reports the minimum bulk ESS over parameters per wall-clock second of
// Run (minESS/s) and per CPU second of the process during Run
// (minESS/cpu-s; less sensitive to other load on the machine), and the
// gradient evaluations per run.
func benchESS(b *testing.B, m mcmc.Target) {
	b.ReportAllocs()
	var rate, cpuRate, grads float64
	seed := uint64(0)
	for b.Loop() {
		seed++
		start, cpu0 := time.Now(), cpuSeconds()
		fit, err := mcmc.Run(context.Background(), m, &mcmc.Settings{Seed: seed})
		if err != nil {
			b.Fatal(err)
		}
		sec, cpu := time.Since(start).Seconds(), cpuSeconds()-cpu0
		minESS := math.Inf(1)
		for _, s := range mcmc.Summarize(fit) {
			minESS = math.Min(minESS, s.ESSBulk)
		}
		rate += minESS / sec
		cpuRate += minESS / cpu
		for _, ch := range fit.Chains {
			grads += float64(ch.Stats.GradientEvaluations)
		}
	}
	b.ReportMetric(rate/float64(b.N), "minESS/s")
	b.ReportMetric(cpuRate/float64(b.N), "minESS/cpu-s")
	b.ReportMetric(grads/float64(b.N), "grads/op")
}

// BenchmarkGaussian100 is the 100-d Gaussian with scales 0.01..100.
func BenchmarkGaussian100(b *testing.B) {
	sigma := scales100()
	benchESS(b, &gaussian{mu: make([]float64, len(sigma)), sigma: sigma})
}

// BenchmarkConjugateRegression is the exact small case of REFERENCES.md
// section 7.
func BenchmarkConjugateRegression(b *testing.B) {
	x := [][]float64{{1, 0}, {1, 1}, {1, 2}, {1, 3}, {1, 4}}
	benchESS(b, newRegression(x, []float64{1, 3, 2, 5, 4}, true, 2, 1))
}

// BenchmarkNorrisRegression is the flat-prior Norris regression (36 rows).
func BenchmarkNorrisRegression(b *testing.B) {
	x := make([][]float64, len(norrisX))
	for i, v := range norrisX {
		x[i] = []float64{1, v}
	}
	benchESS(b, newRegression(x, norrisY, false, 0, 0))
}

// BenchmarkSummarize times the diagnostics of 100 parameters x 4000 draws.
func BenchmarkSummarize(b *testing.B) {
	sigma := scales100()
	fit, err := mcmc.Run(context.Background(), &gaussian{mu: make([]float64, len(sigma)), sigma: sigma}, nil)
	if err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	for b.Loop() {
		mcmc.Summarize(fit)
	}
}
