package main

import (
	"bufio"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"
)

// buildSpillway builds the command into a temporary folder and returns
// the binary's path.
func buildSpillway(t *testing.T) string {
	t.Helper()
	bin := filepath.Join(t.TempDir(), "spillway")
	out, err := exec.Command("go", "build", "-o", bin, ".").CombinedOutput()
	if err != nil {
		t.Fatalf("go build: %v\n%s", err, out)
	}
	return bin
}

// longRun is a demo run long enough to be interrupted while it samples.
func longRun(bin, out string, quiet bool) *exec.Cmd {
	args := []string{"run", "--out", out, "--chains", "2", "--warmup", "5000", "--draws", "5000"}
	if quiet {
		args = append(args, "--quiet")
	}
	return exec.Command(bin, args...)
}

// waitTemp waits until the run's hidden temporary folder beside out exists.
func waitTemp(t *testing.T, out string) {
	t.Helper()
	for range 300 {
		if tempLeft(t, out) != "" {
			return
		}
		time.Sleep(20 * time.Millisecond)
	}
	t.Fatalf("no temporary folder for %s appeared", out)
}

// tempLeft returns the name of a temporary (or aside) folder of out in its
// parent, or "".
func tempLeft(t *testing.T, out string) string {
	t.Helper()
	es, err := os.ReadDir(filepath.Dir(out))
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range es {
		if strings.HasPrefix(e.Name(), "."+filepath.Base(out)+".") {
			return e.Name()
		}
	}
	return ""
}

// exitOf waits for c and returns its exit status (128 + n when the process
// itself died of signal n without handling it).
func exitOf(t *testing.T, c *exec.Cmd) int {
	t.Helper()
	done := make(chan error, 1)
	go func() { done <- c.Wait() }()
	select {
	case <-done:
	case <-time.After(60 * time.Second):
		_ = c.Process.Kill()
		<-done
		t.Fatal("the run did not stop within 60 s of the signal")
	}
	ws := c.ProcessState.Sys().(syscall.WaitStatus)
	if ws.Signaled() {
		return 128 + int(ws.Signal())
	}
	return ws.ExitStatus()
}

// TestSignalsLeaveNothing sends every signal that can be caught to a real
// spillway run in the middle of sampling: it must exit with 128 + the
// signal's number, print "interrupted" (after Ctrl-C the progress line
// too), and leave neither the output
// folder nor its hidden temporary folder. SIGPIPE is caused as in
// 'spillway run ... 2>&1 | head -1': the reader of standard error goes
// away after the first line.
func TestSignalsLeaveNothing(t *testing.T) {
	bin := buildSpillway(t)
	for _, sig := range []syscall.Signal{syscall.SIGHUP, syscall.SIGINT, syscall.SIGQUIT, syscall.SIGTERM} {
		t.Run(sig.String(), func(t *testing.T) {
			t.Parallel()
			out := filepath.Join(t.TempDir(), "h")
			c := longRun(bin, out, sig != syscall.SIGINT)
			var stderr strings.Builder
			c.Stderr = &stderr
			if err := c.Start(); err != nil {
				t.Fatal(err)
			}
			waitTemp(t, out)
			time.Sleep(200 * time.Millisecond)
			if err := c.Process.Signal(sig); err != nil {
				t.Fatal(err)
			}
			if code := exitOf(t, c); code != 128+int(sig) {
				t.Errorf("exit %d, want %d; stderr:\n%s", code, 128+int(sig), stderr.String())
			}
			if !strings.HasSuffix(stderr.String(), "spillway run: interrupted\n") {
				t.Errorf("stderr does not end with 'interrupted':\n%s", stderr.String())
			}
			if left := tempLeft(t, out); left != "" {
				t.Errorf("%s left behind", left)
			}
			if _, err := os.Stat(out); !os.IsNotExist(err) {
				t.Errorf("output folder exists after the signal (err %v)", err)
			}
			// after Ctrl-C the progress line says "interrupted", not "done"
			if s := stderr.String(); sig == syscall.SIGINT && (!strings.Contains(s, "demand: interrupted after ") || strings.Contains(s, ": done,")) {
				t.Errorf("stderr does not say the demand stage was interrupted:\n%s", s)
			}
		})
	}
	t.Run("SIGPIPE", func(t *testing.T) {
		t.Parallel()
		out := filepath.Join(t.TempDir(), "p")
		c := longRun(bin, out, false)
		r, err := c.StderrPipe()
		if err != nil {
			t.Fatal(err)
		}
		if err := c.Start(); err != nil {
			t.Fatal(err)
		}
		first, err := bufio.NewReader(r).ReadString('\n')
		if err != nil {
			t.Fatal(err)
		}
		r.Close() // like head -1
		if !strings.Contains(first, "running the built-in demo") {
			t.Errorf("first line %q", first)
		}
		if code := exitOf(t, c); code != 128+int(syscall.SIGPIPE) {
			t.Errorf("exit %d, want %d", code, 128+int(syscall.SIGPIPE))
		}
		if left := tempLeft(t, out); left != "" {
			t.Errorf("%s left behind", left)
		}
		if _, err := os.Stat(out); !os.IsNotExist(err) {
			t.Errorf("output folder exists after SIGPIPE (err %v)", err)
		}
	})
}
