package main

import (
	"context"
	"errors"
	"io/fs"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"
)

func TestOutDirCommit(t *testing.T) {
	parent := t.TempDir()
	final := filepath.Join(parent, "out")
	od, err := newOutDir(final, false)
	if err != nil {
		t.Fatal(err)
	}
	if dir := filepath.Dir(od.Path()); dir != parent || !strings.HasPrefix(filepath.Base(od.Path()), ".out.tmp-") {
		t.Errorf("temporary folder %s is not a .out.tmp- sibling", od.Path())
	}
	if err := od.WriteFile("charts/a.png", []byte("png")); err != nil {
		t.Fatal(err)
	}
	if _, err := os.Stat(final); !errors.Is(err, os.ErrNotExist) {
		t.Error("the final folder exists before Commit")
	}
	if err := od.Commit(); err != nil {
		t.Fatal(err)
	}
	od.Abort() // after Commit: no effect
	if b, err := os.ReadFile(filepath.Join(final, "charts", "a.png")); err != nil || string(b) != "png" {
		t.Errorf("committed file: %q %v", b, err)
	}
	if names := dirNames(t, parent); !slices.Equal(names, []string{"out"}) {
		t.Errorf("parent holds %v, want [out]", names)
	}
	if fi, _ := os.Stat(final); fi.Mode().Perm() != 0o755 {
		t.Errorf("final folder mode %v, want 0755", fi.Mode().Perm())
	}
}

func TestOutDirExisting(t *testing.T) {
	parent := t.TempDir()
	final := filepath.Join(parent, "out")
	writeFileIn(t, parent, "file", "x")
	writeOutput(t, final, "old.csv")

	// Without force: refused up front, as a usage error.
	_, err := newOutDir(final, false)
	if err == nil || exitCode(context.Background(), err) != exitUsage || !strings.Contains(err.Error(), "already exists; use --force to replace it") {
		t.Errorf("existing without force: got %v", err)
	}
	if _, err := newOutDir(filepath.Join(parent, "file"), true); err == nil || !strings.Contains(err.Error(), "is not a folder") {
		t.Errorf("a file in the way: got %v", err)
	}

	// With force: replaced on Commit, the old folder gone.
	od, err := newOutDir(final, true)
	if err != nil {
		t.Fatal(err)
	}
	if err := od.WriteFile("new.csv", []byte("new")); err != nil {
		t.Fatal(err)
	}
	if _, err := os.Stat(filepath.Join(final, "old.csv")); err != nil {
		t.Error("the old folder changed before Commit")
	}
	if err := od.Commit(); err != nil {
		t.Fatal(err)
	}
	if names := dirNames(t, final); !slices.Equal(names, []string{markerName, "new.csv"}) {
		t.Errorf("replaced folder holds %v, want [%s new.csv]", names, markerName)
	}
	if names := dirNames(t, parent); !slices.Equal(names, []string{"file", "out"}) {
		t.Errorf("parent holds %v", names)
	}

	// A folder that appears while a run without force works is not replaced.
	other := filepath.Join(parent, "other")
	od, err = newOutDir(other, false)
	if err != nil {
		t.Fatal(err)
	}
	if err := os.Mkdir(other, 0o755); err != nil {
		t.Fatal(err)
	}
	if err := od.Commit(); err == nil {
		t.Error("Commit replaced a folder that appeared meanwhile")
	}
	if names := dirNames(t, parent); !slices.Equal(names, []string{"file", "other", "out"}) {
		t.Errorf("after the refused Commit the parent holds %v", names)
	}
}

func TestOutDirAbort(t *testing.T) {
	root := t.TempDir()
	final := filepath.Join(root, "a", "b", "out")
	od, err := newOutDir(final, false)
	if err != nil {
		t.Fatal(err)
	}
	if err := od.WriteFile("x/y.csv", []byte("1")); err != nil {
		t.Fatal(err)
	}
	od.Abort()
	od.Abort()
	if names := dirNames(t, root); len(names) != 0 {
		t.Errorf("Abort left %v (including the parents it made)", names)
	}
	od, err = newOutDir(filepath.Join(root, "out"), false)
	if err != nil {
		t.Fatal(err)
	}
	if err := od.WriteFile("../escape", nil); err == nil {
		t.Error("a name leaving the folder was accepted")
	}
	od.Abort()
}

// TestWriteFailsMidway checks that a command failing after it has written
// part of its output, or interrupted, leaves nothing behind.
func TestWriteFailsMidway(t *testing.T) {
	dir := t.TempDir()
	path := writeFileIn(t, dir, "data.csv", cmdFrame(60).csv())
	out := filepath.Join(dir, "deep", "results")
	args := append([]string{"writetest", "--out", out}, inspectArgs(path)[1:]...)

	code, _, errs := runCmd(t, append(args, "--fail-after-write")...)
	if code != exitFailure || errs != "spillway writetest: failed on purpose after writing\n" {
		t.Errorf("failure mid-way: got %d %q", code, errs)
	}
	if names := dirNames(t, dir); !slices.Equal(names, []string{"data.csv"}) {
		t.Errorf("failure mid-way left %v", names)
	}

	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	code, _, errs = runCtx(t, ctx, args...)
	if code != exitInterrupted || errs != "spillway writetest: interrupted\n" {
		t.Errorf("interrupted: got %d %q", code, errs)
	}
	if names := dirNames(t, dir); !slices.Equal(names, []string{"data.csv"}) {
		t.Errorf("interrupt left %v", names)
	}
}

func TestUpdateInPlace(t *testing.T) {
	dir := t.TempDir()
	writeFileIn(t, dir, "a.csv", "old a")
	err := updateInPlace(dir, map[string][]byte{"a.csv": []byte("new a"), "charts/b.png": []byte("b")})
	if err != nil {
		t.Fatal(err)
	}
	for name, want := range map[string]string{"a.csv": "new a", "charts/b.png": "b"} {
		if b, err := os.ReadFile(filepath.Join(dir, name)); err != nil || string(b) != want {
			t.Errorf("%s: got %q %v, want %q", name, b, err, want)
		}
	}
	if names := dirNames(t, dir); !slices.Equal(names, []string{"a.csv", "charts"}) {
		t.Errorf("folder holds %v", names)
	}
	if fi, _ := os.Stat(filepath.Join(dir, "a.csv")); fi.Mode().Perm() != 0o644 {
		t.Errorf("mode %v, want 0644", fi.Mode().Perm())
	}

	// Failures: nothing changes and no temporary file stays.
	writeFileIn(t, dir, "f.txt", "a file")
	if err := os.Mkdir(filepath.Join(dir, "sub"), 0o755); err != nil {
		t.Fatal(err)
	}
	for name, files := range map[string]map[string][]byte{
		"a folder in the way":       {"a.csv": []byte("x"), "sub": []byte("y")},
		"a name leaving the folder": {"a.csv": []byte("x"), "../z": []byte("y")},
		// "a.csv" sorts first, so its temporary file is written before the
		// second fails (a file where a folder is needed).
		"a write failing mid-way": {"a.csv": []byte("x"), "f.txt/new/c.csv": []byte("y")},
	} {
		if err := updateInPlace(dir, files); err == nil {
			t.Errorf("%s: no error", name)
		}
		if b, _ := os.ReadFile(filepath.Join(dir, "a.csv")); string(b) != "new a" {
			t.Errorf("%s: a.csv changed to %q", name, b)
		}
		if names := dirNames(t, dir); !slices.Equal(names, []string{"a.csv", "charts", "f.txt", "sub"}) {
			t.Errorf("%s: folder holds %v", name, names)
		}
	}
	if err := updateInPlace(filepath.Join(dir, "none"), map[string][]byte{"a": nil}); err == nil {
		t.Error("a missing folder was accepted")
	}
}

// writeOutput writes an output folder at dir holding files, as a spillway
// command would (with its marker).
func writeOutput(t *testing.T, dir string, files ...string) {
	t.Helper()
	od, err := newOutDir(dir, false)
	if err != nil {
		t.Fatal(err)
	}
	for _, f := range files {
		if err := od.WriteFile(f, []byte(f)); err != nil {
			t.Fatal(err)
		}
	}
	if err := od.Commit(); err != nil {
		t.Fatal(err)
	}
}

// TestForceOnlyReplacesOwnOutput: --force refuses (exit 2, nothing
// changed) a folder without spillway's marker, one holding a file spillway
// did not write, and one holding an input of the command; it replaces a
// folder of its own, nested output folders (a validation) included, which
// Dropped names; files added in place by later steps count as its own.
func TestForceOnlyReplacesOwnOutput(t *testing.T) {
	parent := t.TempDir()
	plain := filepath.Join(parent, "plain")
	writeFileIn(t, plain, "sales.csv", "x")
	writeFileIn(t, plain, "notes.txt", "y")
	if _, err := newOutDir(plain, true); err == nil || exitCode(context.Background(), err) != exitUsage || !strings.Contains(err.Error(), "has no spillway marker") {
		t.Errorf("folder without marker: got %v", err)
	}
	if names := dirNames(t, plain); !slices.Equal(names, []string{"notes.txt", "sales.csv"}) {
		t.Errorf("refused folder now holds %v", names)
	}

	run := filepath.Join(parent, "run")
	writeOutput(t, run, "effects.csv", "charts/split.png")
	if err := updateInPlace(run, map[string][]byte{"report.html": []byte("r")}); err != nil {
		t.Fatal(err)
	}
	writeOutput(t, filepath.Join(run, "validation"), "verdict.txt")
	od, err := newOutDir(run, true)
	if err != nil {
		t.Fatalf("own folder with a step's file and a nested validation: %v", err)
	}
	if got := od.Dropped(); len(got) != 1 || got[0] != filepath.Join(run, "validation") {
		t.Errorf("Dropped = %v", got)
	}
	od.Abort()

	writeFileIn(t, filepath.Join(run, "charts"), "mine.png", "z")
	_, err = newOutDir(run, true)
	if err == nil || exitCode(context.Background(), err) != exitUsage || !strings.Contains(err.Error(), "files that spillway did not write") || !strings.Contains(err.Error(), "mine.png") {
		t.Errorf("own folder with a foreign file: got %v", err)
	}
	if err := os.Remove(filepath.Join(run, "charts", "mine.png")); err != nil {
		t.Fatal(err)
	}
	_, err = newOutDir(run, true, filepath.Join(run, "effects.csv"))
	if err == nil || !strings.Contains(err.Error(), "an input of this command, which lies inside the output folder") {
		t.Errorf("input inside: got %v", err)
	}
}

// TestStaleTempRemoved: a temporary folder left by a killed run (its
// process gone) is removed by the next run into the same parent; one of a
// live process is kept.
func TestStaleTempRemoved(t *testing.T) {
	parent := t.TempDir()
	dead := filepath.Join(parent, tmpPrefix("out")+"999999999-123")
	live := filepath.Join(parent, tmpPrefix("out")+strconv.Itoa(os.Getpid())+"-456")
	for _, d := range []string{dead, live} {
		writeFileIn(t, d, "draws.csv", "partial")
	}
	od, err := newOutDir(filepath.Join(parent, "out"), false)
	if err != nil {
		t.Fatal(err)
	}
	defer od.Abort()
	if _, err := os.Stat(dead); !errors.Is(err, fs.ErrNotExist) {
		t.Errorf("stale temporary folder still there (%v)", err)
	}
	if _, err := os.Stat(live); err != nil {
		t.Errorf("a live run's temporary folder was removed: %v", err)
	}
}
