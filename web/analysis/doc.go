// Package analysis holds the app's analysis pipelines between the stored records and the pages: unit
// summaries, densities and pulses, section analyses (change points, age models, tie points) and the
// comparison of eruptions with sedimentary events, with its sensitivity to the choices made.
//
// Each pipeline takes typed options with defaults made here (never by parsing an empty URL), reads its
// data from the store as one snapshot, and returns results ready for a page or a download. It never
// imports net/http, the web package or the views: the web layer turns URLs into options and results into
// pages, and an *OptionError into a 400 that names the parameter carrying the option.
//
// Numerical methods live in stats; this package decides which records enter them and with which choices.
package analysis
