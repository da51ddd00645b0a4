// Package window names periods of weeks the way a review asks for them:
// "all" (the whole data), a calendar quarter "2024Q3", or a range of days
// "2024-01-01:2024-03-31" (both ends inclusive). A week belongs to a window
// when the day it starts on falls inside the window.
//
// A Window carries its date bounds and, once resolved against a series of
// week starts (In, Resolve, Quarters), the indices of its first and last
// week in that series, so the effect split sums over week indices and the
// charts and report filter by date with one type.
package window // import "spillway/funnel/window"
