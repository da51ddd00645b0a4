// Package fitfoldertest writes complete, internally consistent fit folders for
// the tests of the charts, the report and the commands that read them.
//
// The scenario is invented: two upper-funnel channels (video_spend,
// audio_spend), one paid-search channel (search_spend), 156 weeks from
// 2023-01-02, quarters 2023Q1..2025Q4 plus the custom window
// 2024-07-01:2024-12-31. Effects are drawn per posterior draw and every
// summary in the folder is computed from those draws, so the numbers agree
// with each other the way split's output does.
package fitfoldertest // import "spillway/funnel/fitfolder/fitfoldertest"
