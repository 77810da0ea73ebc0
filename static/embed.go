// Package static holds the stylesheet and other files served under /static/, embedded in the binary.
// It imports nothing of coeval.
package static

import "embed"

// FS holds the static files.
//
//go:embed *.css *.js *.svg
var FS embed.FS
