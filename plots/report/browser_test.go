package report_test

import (
	"bytes"
	"context"
	"image/png"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"testing"
	"time"
)

const chromium = "/usr/bin/chromium"

// TestBrowserScreenshot loads the report in headless Chromium, with the
// network features that could fetch anything turned off, and checks the
// screenshot: the page loads and draws (not blank, charts visible). It is
// skipped when Chromium is not installed (apt-get install chromium).
func TestBrowserScreenshot(t *testing.T) {
	if _, err := os.Stat(chromium); err != nil {
		t.Skipf("skipping the browser check: %s is not installed (apt-get install -y chromium)", chromium)
	}
	x := load(t, true) // the untrustworthy fit shows every section
	dir := t.TempDir()
	page := filepath.Join(dir, "report.html")
	if err := os.WriteFile(page, write(t, x, ""), 0o644); err != nil {
		t.Fatal(err)
	}
	shot := filepath.Join(dir, "report.png")
	profile := filepath.Join(dir, "profile")
	ctx, cancel := context.WithTimeout(context.Background(), 90*time.Second)
	defer cancel()
	cmd := exec.CommandContext(ctx, chromium, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic",
		"--no-first-run", "--disable-background-networking", "--disable-component-update", "--disable-sync",
		"--user-data-dir="+profile, "--screenshot="+shot, "--window-size=1400,3000", "file://"+page)
	var out bytes.Buffer
	cmd.Stdout, cmd.Stderr = &out, &out
	if err := cmd.Run(); err != nil {
		t.Fatalf("chromium: %v\n%s", err, out.String())
	}
	b, err := os.ReadFile(shot)
	if err != nil {
		t.Fatalf("no screenshot: %v\n%s", err, out.String())
	}
	img, err := png.Decode(bytes.NewReader(b))
	if err != nil {
		t.Fatal(err)
	}
	if sz := img.Bounds().Size(); sz.X != 1400 || sz.Y != 3000 {
		t.Errorf("screenshot size %v, want 1400x3000", sz)
	}
	// Not blank, and colour from the charts and the red verdict box shows.
	var s, s2, n, coloured float64
	bd := img.Bounds()
	for y := bd.Min.Y; y < bd.Max.Y; y += 4 {
		for x := bd.Min.X; x < bd.Max.X; x += 4 {
			r, g, bl, _ := img.At(x, y).RGBA()
			l := (0.2126*float64(r) + 0.7152*float64(g) + 0.0722*float64(bl)) / 257
			s += l
			s2 += l * l
			n++
			if math.Max(math.Max(float64(r), float64(g)), float64(bl))-math.Min(math.Min(float64(r), float64(g)), float64(bl)) > 80*257 {
				coloured++
			}
		}
	}
	m := s / n
	if sd := math.Sqrt(s2/n - m*m); sd < 15 {
		t.Errorf("screenshot looks blank (luminance sd %.1f)", sd)
	}
	if coloured/n < 0.01 {
		t.Errorf("screenshot has almost no colour (%.2f%% of pixels): charts not drawn?", 100*coloured/n)
	}
	if keep := os.Getenv("SPILLWAY_KEEP_SCREENSHOT"); keep != "" {
		os.WriteFile(keep, b, 0o644)
	}
}
