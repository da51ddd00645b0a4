package validate

import (
	"context"
	"testing"
	"time"

	"spillway/funnel/scenario"
)

// demoInput is the built-in demo data (156 weeks, national; the data
// 'spillway run' and 'spillway validate' use when given none).
func demoInput(b *testing.B) Input {
	b.Helper()
	sc, err := scenario.Named("demo", 1, 0, 0)
	if err != nil {
		b.Fatal(err)
	}
	res, err := sc.Simulate()
	if err != nil {
		b.Fatal(err)
	}
	return Input{Series: res.Data.National(), Spec: res.Data.Spec, Tool: "bench"}
}

// BenchmarkRefit measures one refit of the default sweep on the demo: the
// demand and outcome stages, 4 chains x (500 + 1000) each (chains in
// parallel). Run it with
//
//	go test ./funnel/validate/ -run '^$' -bench Refit -benchtime 3x
//
// ns/op is the wall time of one refit; cpu-s/op the CPU seconds it uses,
// which set the throughput of a sweep (cores / cpu-s per refit).
func BenchmarkRefit(b *testing.B) {
	sw, err := New(demoInput(b), Settings{Checks: []string{Stability}, LeaveOut: []string{}, Seeds: 1, Seed: 1})
	if err != nil {
		b.Fatal(err)
	}
	cpu0 := cpuSeconds()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, err := sw.fit(context.Background(), sw.base, uint64(i)); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric((cpuSeconds()-cpu0)/float64(b.N), "cpu-s/op")
}

// BenchmarkDefaultSweep runs the whole default sweep on the demo (20
// replicates, 4 origins, 12 quarters, 2 seeds and the reference: 39 fits
// of 4 chains x (500 + 1000)). Run it with
//
//	go test ./funnel/validate/ -run '^$' -bench DefaultSweep -benchtime 1x -timeout 60m
func BenchmarkDefaultSweep(b *testing.B) {
	in := demoInput(b)
	for i := 0; i < b.N; i++ {
		sw, err := New(in, Settings{Seed: 1})
		if err != nil {
			b.Fatal(err)
		}
		t0 := time.Now()
		cpu0 := cpuSeconds()
		res, err := sw.Run(context.Background(), Shard{}, nil)
		if err != nil {
			b.Fatal(err)
		}
		if _, _, err := Files(res); err != nil {
			b.Fatal(err)
		}
		b.ReportMetric(time.Since(t0).Minutes(), "wall-min")
		b.ReportMetric(cpuSeconds()-cpu0, "cpu-s")
		b.ReportMetric(float64(len(sw.Jobs())), "fits")
	}
}
