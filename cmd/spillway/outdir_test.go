package main

import (
	"context"
	"errors"
	"os"
	"path/filepath"
	"slices"
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
	if err := os.Mkdir(final, 0o755); err != nil {
		t.Fatal(err)
	}
	writeFileIn(t, final, "old.csv", "old")

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
	if names := dirNames(t, final); !slices.Equal(names, []string{"new.csv"}) {
		t.Errorf("replaced folder holds %v, want [new.csv]", names)
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
