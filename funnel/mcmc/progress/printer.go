package progress

import (
	"fmt"
	"io"
	"sync"
	"time"

	"github.com/schollz/progressbar/v3"

	"spillway/funnel/mcmc"
)

var _ mcmc.Recorder = (*Printer)(nil)

// DefaultInterval is the minimum time between two plain progress lines.
const DefaultInterval = 5 * time.Second

// Options configures New.
type Options struct {
	// Writer receives the output, typically os.Stderr. It must not be nil.
	Writer io.Writer
	// Terminal says the writer is a terminal (the caller decides, e.g. with
	// golang.org/x/term.IsTerminal): draw a progress bar instead of lines.
	Terminal bool
	// Label prefixes the output, e.g. "stage 1". Empty means "sampling".
	Label string
	// Chains and Iterations are the number of chains and the iterations per
	// chain (warm-up plus draws); they size the bar and the percentages.
	Chains, Iterations int
	// Interval is the minimum time between plain lines. Zero means
	// DefaultInterval.
	Interval time.Duration
	// Now is the clock. Nil means time.Now.
	Now func() time.Time
}

// Printer is an mcmc.Recorder that writes progress to a writer. Write
// errors never stop sampling: Record always returns nil, and the first write
// error is kept for Err.
type Printer struct {
	mu       sync.Mutex
	o        Options
	start    time.Time
	last     time.Time
	done     int
	total    int
	inWarmup []bool
	bar      *progressbar.ProgressBar
	err      error
	finished bool
}

// New returns a Printer for o.
func New(o Options) *Printer {
	if o.Writer == nil {
		panic("progress: nil writer")
	}
	if o.Label == "" {
		o.Label = "sampling"
	}
	if o.Interval == 0 {
		o.Interval = DefaultInterval
	}
	if o.Now == nil {
		o.Now = time.Now
	}
	p := &Printer{o: o, total: o.Chains * o.Iterations, inWarmup: make([]bool, o.Chains)}
	for i := range p.inWarmup {
		p.inWarmup[i] = true
	}
	p.start = o.Now()
	p.last = p.start
	if o.Terminal {
		p.bar = progressbar.NewOptions(p.total,
			progressbar.OptionSetWriter(o.Writer),
			progressbar.OptionSetDescription(o.Label),
			progressbar.OptionSetWidth(30),
			progressbar.OptionShowCount(),
			progressbar.OptionSetPredictTime(true),
			progressbar.OptionThrottle(100*time.Millisecond),
			progressbar.OptionSetRenderBlankState(true),
		)
	}
	return p
}

// Record counts one iteration of chain (0-based); iter and warmup are as in
// mcmc.Recorder. It prints a plain line when Interval has passed since the
// previous one, or updates the bar.
func (p *Printer) Record(chain, iter int, warmup bool) error {
	p.mu.Lock()
	defer p.mu.Unlock()
	p.done++
	if chain >= 0 && chain < len(p.inWarmup) {
		p.inWarmup[chain] = warmup
	}
	if p.bar != nil {
		p.keep(p.bar.Add(1))
		return nil
	}
	now := p.o.Now()
	if now.Sub(p.last) >= p.o.Interval {
		p.last = now
		p.line(now)
	}
	return nil
}

func (p *Printer) keep(err error) {
	if err != nil && p.err == nil {
		p.err = err
	}
}

func (p *Printer) line(now time.Time) {
	warm := 0
	for _, w := range p.inWarmup {
		if w {
			warm++
		}
	}
	pct := 0.0
	if p.total > 0 {
		pct = 100 * float64(p.done) / float64(p.total)
	}
	phase := "sampling"
	if warm > 0 {
		phase = fmt.Sprintf("%d of %d chains in warm-up", warm, len(p.inWarmup))
	}
	_, err := fmt.Fprintf(p.o.Writer, "%s: %d/%d iterations (%.0f%%), %s, %s elapsed\n",
		p.o.Label, p.done, p.total, pct, phase, now.Sub(p.start).Round(100*time.Millisecond))
	p.keep(err)
}

// Finish completes the bar, or prints a final plain line, once: the
// sampling is done.
func (p *Printer) Finish() error { return p.end(false) }

// Interrupt ends the display once, saying the sampling was interrupted
// (after Ctrl-C, say) after the iterations recorded so far: the bar is
// left where it stopped, and the final line says "interrupted", not
// "done". After Finish or Interrupt, either does nothing.
func (p *Printer) Interrupt() error { return p.end(true) }

func (p *Printer) end(interrupted bool) error {
	p.mu.Lock()
	defer p.mu.Unlock()
	if p.finished {
		return p.err
	}
	p.finished = true
	now := p.o.Now()
	took := now.Sub(p.start).Round(100 * time.Millisecond)
	if p.bar != nil {
		if interrupted {
			p.keep(p.bar.Exit())
			_, err := fmt.Fprintf(p.o.Writer, "\n%s: interrupted after %d of %d iterations in %s\n", p.o.Label, p.done, p.total, took)
			p.keep(err)
			return p.err
		}
		p.keep(p.bar.Finish())
		_, err := fmt.Fprintln(p.o.Writer)
		p.keep(err)
		return p.err
	}
	var err error
	if interrupted {
		_, err = fmt.Fprintf(p.o.Writer, "%s: interrupted after %d of %d iterations in %s\n", p.o.Label, p.done, p.total, took)
	} else {
		_, err = fmt.Fprintf(p.o.Writer, "%s: done, %d iterations in %s\n", p.o.Label, p.done, took)
	}
	p.keep(err)
	return p.err
}

// Err returns the first write error, if any.
func (p *Printer) Err() error {
	p.mu.Lock()
	defer p.mu.Unlock()
	return p.err
}
