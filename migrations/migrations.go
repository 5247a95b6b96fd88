// Package migrations embeds the SQL schema migrations that golang-migrate applies.
package migrations

import "embed"

// FS holds the numbered *.up.sql and *.down.sql files.
//
//go:embed *.sql
var FS embed.FS
