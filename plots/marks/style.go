package marks

import (
	"image/color"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"

	xfont "golang.org/x/image/font"
)

var (
	sans     = font.Font{Typeface: "Liberation", Variant: "Sans"}
	sansBold = font.Font{Typeface: "Liberation", Variant: "Sans", Weight: xfont.WeightBold}
)

// TextStyle returns a plain-text style in Liberation Sans of the given
// size (points) and colour, bold if asked, left-aligned on its baseline
// box (XLeft, YBottom).
func TextStyle(size vg.Length, c color.Color, bold bool) text.Style {
	f := sans
	if bold {
		f = sansBold
	}
	return text.Style{
		Color:   c,
		Font:    font.From(f, size),
		XAlign:  text.XLeft,
		YAlign:  text.YBottom,
		Handler: plot.DefaultTextHandler,
	}
}

// Wrap breaks s into lines no wider than width in style sty, at spaces; a
// newline in s always starts a new line. A word wider than width gets a
// line of its own.
func Wrap(sty text.Style, s string, width vg.Length) []string {
	var lines []string
	for _, para := range strings.Split(s, "\n") {
		cur := ""
		for _, w := range strings.Fields(para) {
			try := w
			if cur != "" {
				try = cur + " " + w
			}
			if cur != "" && sty.Width(try) > width {
				lines = append(lines, cur)
				cur = w
				continue
			}
			cur = try
		}
		if cur != "" {
			lines = append(lines, cur)
		}
	}
	return lines
}

// Tint returns c with its alpha set to a (0 transparent, 1 opaque), for
// interval bands drawn over white.
func Tint(c color.NRGBA, a float64) color.NRGBA {
	c.A = uint8(a*255 + 0.5)
	return c
}
