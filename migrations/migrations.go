// Package migrations embeds the numbered SQL files that build ebb's schema.
// store.Migrate applies them in name order, one transaction each, and
// records each name; a shipped file is never edited, a new one is added.
package migrations

import "embed"

// FS holds every NNNN_name.sql file of this folder.
//
//go:embed *.sql
var FS embed.FS
