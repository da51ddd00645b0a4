package progress_test

import (
	"bytes"
	"strings"
	"sync"
	"testing"
	"time"

	"spillway/funnel/mcmc/progress"
)

// fakeClock advances by step on every call.
type fakeClock struct {
	mu   sync.Mutex
	t    time.Time
	step time.Duration
}

func (c *fakeClock) now() time.Time {
	c.mu.Lock()
	defer c.mu.Unlock()
	c.t = c.t.Add(c.step)
	return c.t
}

func TestPlainLinesThrottled(t *testing.T) {
	var b bytes.Buffer
	clk := &fakeClock{t: time.Unix(0, 0), step: time.Second}
	p := progress.New(progress.Options{Writer: &b, Label: "stage 1", Chains: 2, Iterations: 10, Interval: 4 * time.Second, Now: clk.now})
	for it := 1; it <= 10; it++ {
		for c := 0; c < 2; c++ {
			if err := p.Record(c, it, it <= 5); err != nil {
				t.Fatal(err)
			}
		}
	}
	if err := p.Finish(); err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSpace(b.String()), "\n")
	// 20 records one second apart, a line every 4 s: 5 lines, then "done".
	if len(lines) != 6 {
		t.Fatalf("got %d lines, want 6:\n%s", len(lines), b.String())
	}
	if lines[0] != "stage 1: 4/20 iterations (20%), 2 of 2 chains in warm-up, 4s elapsed" {
		t.Errorf("first line %q", lines[0])
	}
	if !strings.Contains(lines[4], "20/20") || !strings.Contains(lines[4], "sampling") {
		t.Errorf("last progress line %q", lines[4])
	}
	if !strings.HasPrefix(lines[5], "stage 1: done, 20 iterations") {
		t.Errorf("final line %q", lines[5])
	}
}

func TestBarConcurrent(t *testing.T) {
	var b safeBuffer
	p := progress.New(progress.Options{Writer: &b, Terminal: true, Label: "fit", Chains: 4, Iterations: 200})
	var wg sync.WaitGroup
	for c := range 4 {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for it := 1; it <= 200; it++ {
				p.Record(c, it, it <= 100)
			}
		}()
	}
	wg.Wait()
	if err := p.Finish(); err != nil {
		t.Fatal(err)
	}
	out := b.String()
	if !strings.Contains(out, "fit") || !strings.Contains(out, "800/800") || !strings.Contains(out, "\r") {
		t.Errorf("bar output lacks label, final count or carriage return: %q", out)
	}
}

type safeBuffer struct {
	mu sync.Mutex
	b  bytes.Buffer
}

func (s *safeBuffer) Write(p []byte) (int, error) {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.b.Write(p)
}

func (s *safeBuffer) String() string {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.b.String()
}

// After an interruption (Ctrl-C) the last line says so, plain or on a
// terminal, and a later Finish adds nothing.
func TestInterrupted(t *testing.T) {
	for _, tty := range []bool{false, true} {
		var b bytes.Buffer
		clk := &fakeClock{t: time.Unix(0, 0), step: time.Second}
		p := progress.New(progress.Options{Writer: &b, Terminal: tty, Label: "demand", Chains: 2, Iterations: 10, Interval: time.Hour, Now: clk.now})
		for it := 1; it <= 3; it++ {
			p.Record(0, it, true)
		}
		if err := p.Interrupt(); err != nil {
			t.Fatal(err)
		}
		before := b.String()
		if err := p.Finish(); err != nil {
			t.Fatal(err)
		}
		out := b.String()
		if out != before {
			t.Errorf("terminal %v: Finish after Interrupt wrote %q", tty, out[len(before):])
		}
		lines := strings.Split(strings.TrimSpace(out), "\n")
		last := lines[len(lines)-1]
		if !strings.HasPrefix(last, "demand: interrupted after 3 of 20 iterations") || strings.Contains(out, "done") || strings.Contains(out, "20/20") {
			t.Errorf("terminal %v: output %q, want a last line saying interrupted after 3 of 20", tty, out)
		}
	}
}
