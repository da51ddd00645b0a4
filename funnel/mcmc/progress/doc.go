// Package progress reports the progress of mcmc.Run on an injected
// io.Writer: a progress bar (github.com/schollz/progressbar/v3) when the
// writer is a terminal, otherwise a plain line at most every few seconds.
// A Printer is an mcmc.Recorder and is safe for concurrent chains.
package progress
