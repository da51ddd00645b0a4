// Package pipeline runs the three fits of spillway's model (demand, outcome,
// and the naive outcome without the query term) one after another, chains in
// parallel, and pairs their draws for the effect split.
package pipeline
