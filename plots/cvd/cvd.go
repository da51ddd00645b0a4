package cvd

import (
	"image/color"
	"math"
)

// Deficiency is a kind of dichromacy.
type Deficiency int

const (
	// Normal is trichromatic vision: Simulate returns the colour unchanged.
	Normal Deficiency = iota
	// Protanopia is the lack of long-wavelength (red) cones.
	Protanopia
	// Deuteranopia is the lack of medium-wavelength (green) cones.
	Deuteranopia
	// Tritanopia is the lack of short-wavelength (blue) cones.
	Tritanopia
)

// Deficiencies lists every kind Simulate knows, Normal first.
var Deficiencies = []Deficiency{Normal, Protanopia, Deuteranopia, Tritanopia}

// String returns the deficiency's name.
func (d Deficiency) String() string {
	switch d {
	case Normal:
		return "normal vision"
	case Protanopia:
		return "protanopia"
	case Deuteranopia:
		return "deuteranopia"
	case Tritanopia:
		return "tritanopia"
	}
	return "unknown deficiency"
}

// machado holds the severity-1.0 simulation matrices of Machado, Oliveira
// and Fernandes, "A Physiologically-based Model for Simulation of Color
// Vision Deficiency", IEEE TVCG 15(6), 2009, Table 1 (the protanomaly,
// deuteranomaly and tritanomaly rows at severity 1.0), applied to linear
// RGB.
var machado = map[Deficiency][3][3]float64{
	Protanopia: {
		{0.152286, 1.052583, -0.204868},
		{0.114503, 0.786281, 0.099216},
		{-0.003882, -0.048116, 1.051998},
	},
	Deuteranopia: {
		{0.367322, 0.860646, -0.227968},
		{0.280085, 0.672501, 0.047413},
		{-0.011820, 0.042940, 0.968881},
	},
	Tritanopia: {
		{1.255528, -0.076749, -0.178779},
		{-0.078411, 0.930809, 0.147602},
		{0.004733, 0.691367, 0.303900},
	},
}

// Simulate returns how c appears to a viewer with deficiency d. Alpha is
// ignored; the result is opaque.
func Simulate(c color.Color, d Deficiency) color.NRGBA {
	r, g, b := linearRGB(c)
	if m, ok := machado[d]; ok {
		r, g, b = m[0][0]*r+m[0][1]*g+m[0][2]*b,
			m[1][0]*r+m[1][1]*g+m[1][2]*b,
			m[2][0]*r+m[2][1]*g+m[2][2]*b
	}
	return color.NRGBA{R: encode(r), G: encode(g), B: encode(b), A: 255}
}

// linearRGB returns c's sRGB channels decoded to linear light in 0..1
// (IEC 61966-2-1 transfer function). Alpha is ignored.
func linearRGB(c color.Color) (r, g, b float64) {
	n := color.NRGBAModel.Convert(c).(color.NRGBA)
	return decode(n.R), decode(n.G), decode(n.B)
}

func decode(v uint8) float64 {
	x := float64(v) / 255
	if x <= 0.04045 {
		return x / 12.92
	}
	return math.Pow((x+0.055)/1.055, 2.4)
}

func encode(x float64) uint8 {
	x = math.Max(0, math.Min(1, x))
	if x <= 0.0031308 {
		x *= 12.92
	} else {
		x = 1.055*math.Pow(x, 1/2.4) - 0.055
	}
	return uint8(math.Round(x * 255))
}

// Lab is a colour in CIE 1976 L*a*b* (D65 white): L in 0..100.
type Lab struct{ L, A, B float64 }

// ToLab converts the sRGB colour c to CIE L*a*b* with the D65 white point
// (sRGB primaries, IEC 61966-2-1; CIE 15:2004 for L*a*b*). Alpha is ignored.
func ToLab(c color.Color) Lab {
	r, g, b := linearRGB(c)
	x := 0.4124564*r + 0.3575761*g + 0.1804375*b
	y := 0.2126729*r + 0.7151522*g + 0.0721750*b
	z := 0.0193339*r + 0.1191920*g + 0.9503041*b
	const xn, yn, zn = 0.95047, 1.0, 1.08883
	f := func(t float64) float64 {
		const e = 216.0 / 24389
		const k = 24389.0 / 27
		if t > e {
			return math.Cbrt(t)
		}
		return (k*t + 16) / 116
	}
	fx, fy, fz := f(x/xn), f(y/yn), f(z/zn)
	return Lab{L: 116*fy - 16, A: 500 * (fx - fy), B: 200 * (fy - fz)}
}

// DeltaE2000 returns the CIEDE2000 colour difference between p and q with
// the parametric factors kL = kC = kH = 1 (Sharma, Wu and Dalal, "The
// CIEDE2000 color-difference formula: implementation notes, supplementary
// test data, and mathematical observations", Color Res. Appl. 30(1), 2005,
// equations 1-18). About 1 is a just-noticeable difference; charts want
// categorical colours tens apart.
func DeltaE2000(p, q Lab) float64 {
	rad := math.Pi / 180
	c1 := math.Hypot(p.A, p.B)
	c2 := math.Hypot(q.A, q.B)
	cbar := (c1 + c2) / 2
	c7 := math.Pow(cbar, 7)
	g := 0.5 * (1 - math.Sqrt(c7/(c7+math.Pow(25, 7))))
	a1, a2 := (1+g)*p.A, (1+g)*q.A
	c1p, c2p := math.Hypot(a1, p.B), math.Hypot(a2, q.B)
	hue := func(b, a float64) float64 {
		if a == 0 && b == 0 {
			return 0
		}
		h := math.Atan2(b, a) / rad
		if h < 0 {
			h += 360
		}
		return h
	}
	h1, h2 := hue(p.B, a1), hue(q.B, a2)

	dL := q.L - p.L
	dC := c2p - c1p
	var dh float64
	switch {
	case c1p*c2p == 0:
		dh = 0
	case math.Abs(h2-h1) <= 180:
		dh = h2 - h1
	case h2-h1 > 180:
		dh = h2 - h1 - 360
	default:
		dh = h2 - h1 + 360
	}
	dH := 2 * math.Sqrt(c1p*c2p) * math.Sin(dh/2*rad)

	lbar := (p.L + q.L) / 2
	cbarp := (c1p + c2p) / 2
	var hbar float64
	switch {
	case c1p*c2p == 0:
		hbar = h1 + h2
	case math.Abs(h1-h2) <= 180:
		hbar = (h1 + h2) / 2
	case h1+h2 < 360:
		hbar = (h1 + h2 + 360) / 2
	default:
		hbar = (h1 + h2 - 360) / 2
	}
	t := 1 - 0.17*math.Cos((hbar-30)*rad) + 0.24*math.Cos(2*hbar*rad) +
		0.32*math.Cos((3*hbar+6)*rad) - 0.20*math.Cos((4*hbar-63)*rad)
	dtheta := 30 * math.Exp(-math.Pow((hbar-275)/25, 2))
	cp7 := math.Pow(cbarp, 7)
	rc := 2 * math.Sqrt(cp7/(cp7+math.Pow(25, 7)))
	l50 := (lbar - 50) * (lbar - 50)
	sl := 1 + 0.015*l50/math.Sqrt(20+l50)
	sc := 1 + 0.045*cbarp
	sh := 1 + 0.015*cbarp*t
	rt := -math.Sin(2*dtheta*rad) * rc
	return math.Sqrt(math.Pow(dL/sl, 2) + math.Pow(dC/sc, 2) + math.Pow(dH/sh, 2) + rt*(dC/sc)*(dH/sh))
}

// Difference returns the CIEDE2000 difference between a and b as seen with
// deficiency d (both simulated first).
func Difference(a, b color.Color, d Deficiency) float64 {
	return DeltaE2000(ToLab(Simulate(a, d)), ToLab(Simulate(b, d)))
}
