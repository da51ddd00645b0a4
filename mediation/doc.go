// Package mediation splits each upper-funnel channel's effect on the outcome
// into the part that runs through branded search demand (the natural
// indirect effect) and the direct part (the natural direct effect; Pearl
// 2001; Imai, Keele and Tingley 2010), by counterfactual simulation over
// paired posterior draws of the demand and outcome stages. It also measures
// how much of paid search's apparent return is demand borrowed from the upper
// funnel (the omitted-variable identity inside one posterior), and how the
// mediated effect moves when the stages' errors are allowed to correlate.
//
// Every effect is in outcome units summed over a window of weeks; the
// counterfactual sets one channel's spend to zero in the window, carryover
// into later weeks included. The model's arithmetic on spend plans, and so
// every counterfactual here, is funnel/forward's.
package mediation
