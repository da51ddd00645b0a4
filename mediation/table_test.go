package mediation

import (
	"bytes"
	"strings"
	"testing"
)

// TestTableAlignsLongNames: with channel names longer than the default
// column, every row of each table still starts its columns at the same
// places as its header.
func TestTableAlignsLongNames(t *testing.T) {
	d := func(v float64) []float64 { return []float64{v, 2 * v, 3 * v} }
	r := &Result{}
	for _, c := range []string{"connected_tv_and_online_video_spend", "audio"} {
		for _, p := range []struct {
			path string
			v    float64
		}{{"direct", 1000}, {"via_search", 123456789}, {"total", 123457789}, {"mediated_share", 0.4}} {
			r.Effects = append(r.Effects, Effect{Channel: c, Path: p.path, Window: "all", Draws: d(p.v)})
		}
	}
	for _, p := range []string{"controlled", "apparent", "borrowed_share"} {
		r.Borrowed = append(r.Borrowed, Effect{Channel: "paid_search_brand_and_generic_terms", Path: p, Window: "all", Draws: d(0.5)})
	}
	var b bytes.Buffer
	if err := Table(&b, r, "all", "orders"); err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(b.String(), "\n")
	// column starts: where each header word begins, checked against the
	// rows below (each cell starts right after a run of spaces)
	check := func(header string, rows []string, words []string) {
		for _, w := range words {
			at := strings.Index(header, w)
			for _, row := range rows {
				if at <= 0 || at >= len(row) || row[at-1] != ' ' || row[at] == ' ' {
					t.Errorf("column %q (at %d) not aligned in %q", w, at, row)
				}
			}
		}
	}
	check(lines[1], lines[2:4], []string{"direct", "via search", "total", "share via search"})
	check(lines[6], lines[7:8], []string{"controlled", "apparent", "borrowed share"})
}
