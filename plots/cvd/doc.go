// Package cvd checks colours for people with colour-vision deficiency: it
// simulates protanopia, deuteranopia and tritanopia with the matrices of
// Machado, Oliveira and Fernandes (2009) and measures colour differences in
// CIE L*a*b* with the CIEDE2000 formula (Sharma, Wu and Dalal 2005).
//
// Colours are 8-bit sRGB (image/color); simulation works on linear RGB, as
// the matrices are defined there, and Lab uses the D65 white point.
package cvd // import "spillway/plots/cvd"
