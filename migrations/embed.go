// Package migrations embeds the store's numbered SQL migrations into the
// binary. Files are named NNNN_what.sql and applied in order, each in one
// transaction. A migration only ever adds or transforms: the tables and views
// are a public interface that analysts query directly.
package migrations

import "embed"

// FS holds the *.sql files of this folder.
//
//go:embed *.sql
var FS embed.FS
