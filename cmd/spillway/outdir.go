package main

import (
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"syscall"
)

// outDir is an output folder written atomically: everything goes into a
// temporary sibling folder, which Commit renames into place. Until then the
// final path is untouched, and Abort (or any failure) leaves nothing behind.
//
// Use it as:
//
//	od, err := newOutDir(opts.out, opts.force) // before any work
//	if err != nil { return err }
//	defer od.Abort()                           // no-op after Commit
//	... write files under od.Path() ...
//	return od.Commit()
type outDir struct {
	final   string   // the folder asked for
	tmp     string   // the temporary sibling being written
	force   bool     // replace an existing final folder on Commit
	made    []string // parent folders created by newOutDir, deepest first
	dropped []string // spillway output folders inside final that Commit removes with it
	settled bool     // Commit or Abort has run
}

// Dropped returns the output folders of earlier spillway commands inside
// the folder being replaced (such as its validation), which go with it.
func (o *outDir) Dropped() []string { return o.dropped }

// newOutDir prepares an atomic output folder at path. Without force an
// existing path is a usage error, reported here, before any work starts;
// with force an existing folder is replaced on Commit (a file in the way is
// an error either way). Missing parent folders are created (and removed
// again by Abort). The temporary folder is ".NAME.tmp-XXXX" in the same
// parent, so that Commit is a rename within one file system.
//
// With force, only a folder that spillway wrote is replaced: it must carry
// spillway's marker, hold no file that spillway did not write, and not hold
// any of inputs (the files the command reads); otherwise newOutDir refuses
// with a usage error that says why. Output folders that spillway wrote
// inside it (a validation folder, say) go with it; Dropped names them.
func newOutDir(path string, force bool, inputs ...string) (*outDir, error) {
	if path == "" {
		return nil, usagef("no output folder given; name one with --out")
	}
	final := filepath.Clean(path)
	var dropped []string
	if fi, err := os.Stat(final); err == nil {
		switch {
		case !fi.IsDir():
			return nil, usagef("output path %s exists and is not a folder", final)
		case !force:
			return nil, usagef("output folder %s already exists; use --force to replace it", final)
		}
		if dropped, err = replaceable(final, inputs); err != nil {
			return nil, err
		}
	} else if !errors.Is(err, fs.ErrNotExist) {
		return nil, err
	}
	o := &outDir{final: final, force: force, dropped: dropped}
	parent := filepath.Dir(final)
	for p := parent; ; p = filepath.Dir(p) {
		if _, err := os.Stat(p); err == nil {
			break
		}
		o.made = append(o.made, p)
		if filepath.Dir(p) == p {
			break
		}
	}
	if err := os.MkdirAll(parent, 0o755); err != nil {
		o.removeMade()
		return nil, fmt.Errorf("cannot create the output folder's parent: %w", err)
	}
	removeStale(parent, filepath.Base(final))
	tmp, err := os.MkdirTemp(parent, tmpPrefix(filepath.Base(final))+strconv.Itoa(os.Getpid())+"-")
	if err != nil {
		o.removeMade()
		return nil, fmt.Errorf("cannot create a temporary output folder: %w", err)
	}
	o.tmp = tmp
	return o, nil
}

// dropNote says on stderr which output folders inside the folder being
// replaced go with it (the validation of a replaced run, say), so that
// nobody loses them by surprise.
func dropNote(stderr io.Writer, o *outDir) {
	for _, d := range o.Dropped() {
		fmt.Fprintf(stderr, "spillway: note: --force replaces %s, and with it %s, written by an earlier spillway command; move it out first to keep it\n", o.Final(), d)
	}
}

// Path returns the temporary folder to write into.
func (o *outDir) Path() string { return o.tmp }

// Final returns the folder that Commit creates.
func (o *outDir) Final() string { return o.final }

// WriteFile writes data to name (a slash-separated path relative to the
// output folder), creating sub-folders as needed.
func (o *outDir) WriteFile(name string, data []byte) error {
	p, err := within(o.tmp, name)
	if err != nil {
		return err
	}
	if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
		return err
	}
	return os.WriteFile(p, data, 0o644)
}

// Commit renames the temporary folder into place. An existing final folder
// is replaced only with force (it is moved aside first and removed after the
// rename, and put back if the rename fails); without force one that
// appeared meanwhile is an error, and the new output is discarded.
func (o *outDir) Commit() error {
	if o.settled {
		panic("spillway: outDir committed or aborted twice")
	}
	if err := writeMarker(o.tmp); err != nil {
		o.Abort()
		return err
	}
	if err := os.Chmod(o.tmp, 0o755); err != nil {
		o.Abort()
		return err
	}
	old := ""
	if _, err := os.Lstat(o.final); err == nil {
		if !o.force {
			o.Abort()
			return usagef("output folder %s already exists; use --force to replace it", o.final)
		}
		aside, err := os.MkdirTemp(filepath.Dir(o.final), "."+filepath.Base(o.final)+".old-")
		if err == nil {
			err = os.Remove(aside)
		}
		if err == nil {
			err = os.Rename(o.final, aside)
		}
		if err != nil {
			o.Abort()
			return fmt.Errorf("cannot move the old output folder aside: %w", err)
		}
		old = aside
	}
	if err := os.Rename(o.tmp, o.final); err != nil {
		if old != "" {
			_ = os.Rename(old, o.final)
		}
		o.Abort()
		return fmt.Errorf("cannot put the output folder in place: %w", err)
	}
	o.settled = true
	if old != "" {
		if err := os.RemoveAll(old); err != nil {
			return fmt.Errorf("the output is in place, but the old folder %s could not be removed: %w", old, err)
		}
	}
	return nil
}

// Abort removes the temporary folder and any parents newOutDir created. It
// does nothing after Commit, so it can be deferred right after newOutDir.
func (o *outDir) Abort() {
	if o.settled {
		return
	}
	o.settled = true
	_ = os.RemoveAll(o.tmp)
	o.removeMade()
}

// removeMade removes the parent folders newOutDir created, if empty.
func (o *outDir) removeMade() {
	for _, p := range o.made {
		_ = os.Remove(p) // fails, harmlessly, when not empty
	}
}

// within joins name (slash-separated, relative) to dir and rejects names
// that would leave dir.
func within(dir, name string) (string, error) {
	clean := filepath.Clean(filepath.FromSlash(name))
	if name == "" || filepath.IsAbs(clean) || clean == "." || clean == ".." || strings.HasPrefix(clean, ".."+string(filepath.Separator)) {
		return "", fmt.Errorf("bad output file name %q", name)
	}
	return filepath.Join(dir, clean), nil
}

// updateInPlace adds or replaces files in the existing folder dir (such as
// a fit folder that split, chart or report add to). Names are
// slash-separated paths relative to dir. Every file is first written in
// full to a temporary file beside its target, then each is renamed into
// place, so no target is ever half-written; if any write fails, every
// temporary file is removed and no target changes. Folder problems found
// up front (dir missing, a target that is a folder) change nothing either.
func updateInPlace(dir string, files map[string][]byte) (err error) {
	fi, err := os.Stat(dir)
	if err != nil {
		return fmt.Errorf("cannot update %s: %w", dir, err)
	}
	if !fi.IsDir() {
		return fmt.Errorf("cannot update %s: not a folder", dir)
	}
	names := make([]string, 0, len(files))
	for n := range files {
		names = append(names, n)
	}
	slices.Sort(names)
	if m, err := readMarker(dir); err == nil {
		// the folder is spillway's: record the new files in its marker
		for _, n := range names {
			if !slices.Contains(m.Files, n) {
				m.Files = append(m.Files, n)
			}
		}
		slices.Sort(m.Files)
		b, err := json.MarshalIndent(m, "", "  ")
		if err != nil {
			return err
		}
		files[markerName] = append(b, '\n')
		names = append(names, markerName)
	}
	targets := make([]string, len(names))
	for i, n := range names {
		p, err := within(dir, n)
		if err != nil {
			return err
		}
		if fi, err := os.Stat(p); err == nil && fi.IsDir() {
			return fmt.Errorf("cannot write %s: a folder is in the way", p)
		}
		targets[i] = p
	}
	var temps []string
	var made []string
	defer func() {
		if err != nil {
			for _, t := range temps {
				_ = os.Remove(t)
			}
			for i := len(made) - 1; i >= 0; i-- {
				_ = os.Remove(made[i])
			}
		}
	}()
	for i, p := range targets {
		sub := filepath.Dir(p)
		if _, err := os.Stat(sub); errors.Is(err, fs.ErrNotExist) {
			for q := sub; q != dir; q = filepath.Dir(q) {
				if _, err := os.Stat(q); err == nil {
					break
				}
				made = append([]string{q}, made...)
			}
			if err := os.MkdirAll(sub, 0o755); err != nil {
				return err
			}
		}
		f, err := os.CreateTemp(sub, "."+filepath.Base(p)+".tmp-")
		if err != nil {
			return err
		}
		temps = append(temps, f.Name())
		_, werr := f.Write(files[names[i]])
		if werr == nil {
			werr = f.Sync()
		}
		cerr := f.Close()
		if werr != nil {
			return fmt.Errorf("cannot write %s: %w", p, werr)
		}
		if cerr != nil {
			return fmt.Errorf("cannot write %s: %w", p, cerr)
		}
		if err := os.Chmod(f.Name(), 0o644); err != nil {
			return err
		}
	}
	for i, p := range targets {
		if err := os.Rename(temps[i], p); err != nil {
			return fmt.Errorf("cannot put %s in place: %w", p, err)
		}
	}
	temps = nil
	return nil
}

// markerName is the file by which spillway recognises a folder it wrote.
// It lists every file written there, so that --force can tell spillway's
// output from anything a user put beside it.
const markerName = ".spillway.json"

type marker struct {
	WrittenBy string   `json:"written_by"`
	Files     []string `json:"files"` // slash-separated, relative, sorted
}

// writeMarker lists the files under dir (except nested output folders,
// which carry their own marker) into dir's marker.
func writeMarker(dir string) error {
	m := marker{WrittenBy: "spillway", Files: []string{}}
	err := filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		if d.IsDir() {
			if p != dir && hasMarker(p) {
				return filepath.SkipDir
			}
			return nil
		}
		rel, err := filepath.Rel(dir, p)
		if err != nil {
			return err
		}
		m.Files = append(m.Files, filepath.ToSlash(rel))
		return nil
	})
	if err != nil {
		return err
	}
	slices.Sort(m.Files)
	b, err := json.MarshalIndent(m, "", "  ")
	if err != nil {
		return err
	}
	return os.WriteFile(filepath.Join(dir, markerName), append(b, '\n'), 0o644)
}

func readMarker(dir string) (*marker, error) {
	b, err := os.ReadFile(filepath.Join(dir, markerName))
	if err != nil {
		return nil, err
	}
	var m marker
	if err := json.Unmarshal(b, &m); err != nil || m.WrittenBy != "spillway" {
		return nil, fmt.Errorf("%s is not spillway's marker", filepath.Join(dir, markerName))
	}
	return &m, nil
}

func hasMarker(dir string) bool {
	_, err := readMarker(dir)
	return err == nil
}

// replaceable checks that --force may replace the existing folder dir: it
// carries spillway's marker, every file in it is one spillway wrote (in
// dir or in a nested output folder with its own marker), and none of
// inputs lies inside it. It returns the nested output folders.
func replaceable(dir string, inputs []string) ([]string, error) {
	absDir, err := filepath.Abs(dir)
	if err != nil {
		return nil, err
	}
	for _, in := range inputs {
		if in == "" {
			continue
		}
		abs, err := filepath.Abs(in)
		if err != nil {
			return nil, err
		}
		if rel, err := filepath.Rel(absDir, abs); err == nil && rel != ".." && !strings.HasPrefix(rel, ".."+string(filepath.Separator)) {
			return nil, usagef("--force would delete %s, an input of this command, which lies inside the output folder %s; choose another --out", in, dir)
		}
	}
	var foreign, nested []string
	var walk func(d string) error
	walk = func(d string) error {
		m, err := readMarker(d)
		if err != nil {
			if d == dir {
				return usagef("--force replaces only a folder that spillway wrote, and %s has no spillway marker (%s); remove it yourself or choose another --out", dir, markerName)
			}
			return nil
		}
		if d != dir {
			nested = append(nested, d)
		}
		return filepath.WalkDir(d, func(p string, e fs.DirEntry, err error) error {
			if err != nil {
				return err
			}
			if e.IsDir() {
				if p != d && hasMarker(p) {
					if err := walk(p); err != nil {
						return err
					}
					return filepath.SkipDir
				}
				return nil
			}
			rel, _ := filepath.Rel(d, p)
			rel = filepath.ToSlash(rel)
			if rel != markerName && !slices.Contains(m.Files, rel) {
				foreign = append(foreign, p)
			}
			return nil
		})
	}
	if err := walk(dir); err != nil {
		return nil, err
	}
	if len(foreign) > 0 {
		shown := foreign
		more := ""
		if len(shown) > 5 {
			shown, more = shown[:5], fmt.Sprintf(" and %d more", len(foreign)-5)
		}
		return nil, usagef("--force would delete files that spillway did not write in %s: %s%s; move them out or choose another --out", dir, strings.Join(shown, ", "), more)
	}
	return nested, nil
}

// tmpPrefix is the name prefix of the temporary folders of output name; the
// creating process's id follows it, so that a later run can remove the
// folders of runs that were killed.
func tmpPrefix(name string) string { return "." + name + ".tmp-" }

// removeStale removes temporary output folders of name in parent whose
// process is gone (killed before it could clean up).
func removeStale(parent, name string) {
	es, err := os.ReadDir(parent)
	if err != nil {
		return
	}
	prefix := tmpPrefix(name)
	for _, e := range es {
		rest, ok := strings.CutPrefix(e.Name(), prefix)
		if !ok || !e.IsDir() {
			continue
		}
		pid, _, ok := strings.Cut(rest, "-")
		n, err := strconv.Atoi(pid)
		if !ok || err != nil || n <= 0 || alive(n) {
			continue
		}
		_ = os.RemoveAll(filepath.Join(parent, e.Name()))
	}
}

// alive reports whether process pid exists (signal 0 checks without
// sending); when unsure it says yes, so nothing live is removed.
func alive(pid int) bool {
	err := syscall.Kill(pid, 0)
	return err == nil || !errors.Is(err, syscall.ESRCH)
}
