// Package static embeds ebb's stylesheet, scripts and vendored front-end
// files, served under /static/.
package static

import "embed"

// FS holds the files of this folder.
//
//go:embed *.css *.js
var FS embed.FS
