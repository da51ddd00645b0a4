// Package scenario simulates weekly data from spillway's default model with
// known parameters: the built-in demo (an invented brand, Quillmere Bikes,
// selling through video, audio and paid search) and variants used to test
// that the model recovers the truth.
package scenario
