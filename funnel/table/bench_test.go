package table

import (
	"bytes"
	"testing"
)

type drawRow struct {
	Channel string `csv:"channel"`
	Path    string `csv:"path"`
	Window  string `csv:"window"`
	Draw    Int    `csv:".draw"`
	Value   Float  `csv:"value"`
}

// BenchmarkWriteDraws writes a table the size of the demo's effect_draws.csv
// (312,000 rows).
func BenchmarkWriteDraws(b *testing.B) {
	rows := make([]drawRow, 312000)
	for i := range rows {
		rows[i] = drawRow{"video_spend", "via_search", "2024Q3", Int(i + 1), Float(float64(i) * 1.2345678)}
	}
	var buf bytes.Buffer
	for b.Loop() {
		buf.Reset()
		if err := Write(&buf, rows); err != nil {
			b.Fatal(err)
		}
	}
	b.SetBytes(int64(buf.Len()))
}

// BenchmarkReadDraws reads it back.
func BenchmarkReadDraws(b *testing.B) {
	rows := make([]drawRow, 312000)
	for i := range rows {
		rows[i] = drawRow{"video_spend", "via_search", "2024Q3", Int(i + 1), Float(float64(i) * 1.2345678)}
	}
	var buf bytes.Buffer
	Write(&buf, rows)
	for b.Loop() {
		var out []drawRow
		if _, err := Read(bytes.NewReader(buf.Bytes()), "x", &out, Options{}); err != nil {
			b.Fatal(err)
		}
	}
}
