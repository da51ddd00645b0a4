// Package transform holds the media transforms of the default model: normalised
// geometric adstock and Hill saturation, with the partial derivatives the
// samplers need.
package transform
