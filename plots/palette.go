package plots

import "image/color"

// The palette. Every chart uses the same meaning for each colour: blue is
// a channel's own (direct) effect, amber is effect that runs through branded
// search, near-black is a total or an actual, grey is a cross-check, red is
// a threshold or a failed check. TestPaletteColourBlindSafe checks that
// these stay apart for protanopia, deuteranopia and tritanopia.
var (
	// Direct is the colour of direct effects (and of paid search's own,
	// controlled, effect).
	Direct = color.NRGBA{0x1A, 0x5A, 0x96, 0xFF}
	// ViaSearch is the colour of effects that run through branded search
	// (and of demand borrowed from the upper funnel).
	ViaSearch = color.NRGBA{0xEE, 0x9A, 0x22, 0xFF}
	// Ink is the colour of text, totals and actuals.
	Ink = color.NRGBA{0x1E, 0x1E, 0x1E, 0xFF}
	// Faint is the colour of cross-checks drawn in the background.
	Faint = color.NRGBA{0xA0, 0xA0, 0xA0, 0xFF}
	// Alert is the colour of thresholds and failed checks.
	Alert = color.NRGBA{0xB3, 0x26, 0x1E, 0xFF}

	// Muted is the colour of captions and axis furniture.
	Muted = color.NRGBA{0x55, 0x55, 0x55, 0xFF}
	// Grid is the colour of grid lines.
	Grid = color.NRGBA{0xE2, 0xE2, 0xE2, 0xFF}
	// Shade is the background of the review window on time charts.
	Shade = color.NRGBA{0xF3, 0xEC, 0xDA, 0xFF}
)

// Categorical lists the colours that must be told apart from each other,
// with their roles, for the colour-blind check.
var Categorical = []struct {
	Role  string
	Color color.NRGBA
}{
	{"direct", Direct}, {"via search", ViaSearch}, {"total or actual", Ink},
	{"cross-check", Faint}, {"threshold", Alert},
}

// Type sizes in points on the 1200×675 pt page (1600×900 px at 96 dpi).
const (
	sizeTitle   = 30
	sizeBanner  = 22
	sizeLegend  = 20
	sizePanel   = 23
	sizeAxis    = 20
	sizeTick    = 19
	sizeLabel   = 19
	sizeCaption = 17
)
