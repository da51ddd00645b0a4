package main

import (
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
)

// TestReadmeSetUp holds the README's two set-up commands to what CI runs:
// the test command is the very line .ci/run runs, with an explicit
// per-package time limit (Go's default of 10 minutes was hit on a busy
// 2-core machine), and the first command is a run of the demo.
func TestReadmeSetUp(t *testing.T) {
	readme, err := os.ReadFile(filepath.Join("..", "..", "README.md"))
	if err != nil {
		t.Fatal(err)
	}
	ci, err := os.ReadFile(filepath.Join("..", "..", ".ci", "run"))
	if err != nil {
		t.Fatal(err)
	}
	block := regexp.MustCompile("(?s)```sh\n(.*?)```").FindSubmatch(readme)
	if block == nil {
		t.Fatal("README has no sh block")
	}
	lines := strings.Split(strings.TrimSpace(string(block[1])), "\n")
	if len(lines) != 2 || lines[0] != "go run ./cmd/spillway run --out demo-out" {
		t.Fatalf("README's set-up block is %q, want the demo run and the test command", lines)
	}
	test := lines[1]
	if !regexp.MustCompile(`^go test -timeout [0-9]+m \./\.\.\.$`).MatchString(test) {
		t.Errorf("README's test command %q has no explicit -timeout", test)
	}
	var ran []string
	for _, l := range strings.Split(string(ci), "\n") {
		if strings.HasPrefix(l, "go test") {
			ran = append(ran, l)
		}
	}
	if len(ran) != 1 || ran[0] != test {
		t.Errorf(".ci/run runs %q, the README %q; keep them the same command", ran, test)
	}
	if !strings.Contains(string(readme), "go install ./cmd/spillway") || !strings.Contains(string(readme), "$(go env GOPATH)/bin") {
		t.Error("README lacks the install step and where the binary lands")
	}
}
