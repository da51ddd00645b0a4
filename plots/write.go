package plots

import (
	"fmt"
	"os"
	"path/filepath"

	"spillway/funnel/fitfolder"
)

// Render builds every chart for the window and encodes each as PNG. It
// returns the PNGs by chart name (the keys are NamesOf(f)). Nothing is written.
func Render(f *fitfolder.Fit, window string) (map[string][]byte, error) {
	figs, err := Build(f, window)
	if err != nil {
		return nil, err
	}
	out := make(map[string][]byte, len(figs))
	for _, fig := range figs {
		b, err := fig.PNG()
		if err != nil {
			return nil, err
		}
		out[fig.Name] = b
	}
	return out, nil
}

// WriteCharts renders every chart for the window and writes them as
// outDir/NAME.png (outDir is created if needed). All charts are rendered
// before anything is written, and each file is written to a temporary file
// in outDir and renamed into place, so a failure leaves no partial PNG: a
// chart file is either the old one or the new one. It returns the paths
// written, in the order of NamesOf(f).
func WriteCharts(f *fitfolder.Fit, window string, outDir string) ([]string, error) {
	pngs, err := Render(f, window)
	if err != nil {
		return nil, err
	}
	if err := os.MkdirAll(outDir, 0o755); err != nil {
		return nil, err
	}
	var paths []string
	for _, n := range NamesOf(f) {
		path := filepath.Join(outDir, n+".png")
		if err := WriteFileAtomic(path, pngs[n]); err != nil {
			return paths, err
		}
		paths = append(paths, path)
	}
	return paths, nil
}

// WriteFileAtomic writes data to path through a temporary file in the same
// folder that is synced and then renamed over path, so readers see either
// the old file or the whole new one. On error the temporary file is
// removed and path is left as it was.
func WriteFileAtomic(path string, data []byte) (err error) {
	dir, base := filepath.Split(path)
	if dir == "" {
		dir = "."
	}
	tmp, err := os.CreateTemp(dir, "."+base+".tmp-*")
	if err != nil {
		return err
	}
	defer func() {
		if err != nil {
			tmp.Close()
			os.Remove(tmp.Name())
		}
	}()
	if _, err = tmp.Write(data); err != nil {
		return fmt.Errorf("write %s: %w", path, err)
	}
	if err = tmp.Sync(); err != nil {
		return fmt.Errorf("write %s: %w", path, err)
	}
	if err = tmp.Chmod(0o644); err != nil {
		return fmt.Errorf("write %s: %w", path, err)
	}
	if err = tmp.Close(); err != nil {
		return fmt.Errorf("write %s: %w", path, err)
	}
	if err = os.Rename(tmp.Name(), path); err != nil {
		return fmt.Errorf("write %s: %w", path, err)
	}
	return nil
}
