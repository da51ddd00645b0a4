package validation

import (
	"os"
	"testing"

	"spillway/funnel/validate"
)

// TestRenderFolder redraws validation.png from a validate folder named by
// SPILLWAY_VALIDATION_DIR into that folder's validation-redraw.png, for a
// look by eye; it skips without the variable.
func TestRenderFolder(t *testing.T) {
	dir := os.Getenv("SPILLWAY_VALIDATION_DIR")
	if dir == "" {
		t.Skip("SPILLWAY_VALIDATION_DIR not set")
	}
	m, err := os.Open(dir + "/manifest.json")
	if err != nil {
		t.Fatal(err)
	}
	defer m.Close()
	j, err := os.Open(dir + "/jobs.csv")
	if err != nil {
		t.Fatal(err)
	}
	defer j.Close()
	res, err := validate.ReadResults(m, j, dir)
	if err != nil {
		t.Fatal(err)
	}
	rep, err := validate.Aggregate(res)
	if err != nil {
		t.Fatal(err)
	}
	b, err := PNG(rep)
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(dir+"/validation-redraw.png", b, 0o644); err != nil {
		t.Fatal(err)
	}
}
