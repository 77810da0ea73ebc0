// Package migrations holds coeval's ordered SQL schema migrations as an embedded file system.
//
// Files are named NNN_description.sql; NNN is a unique, increasing version number. Each file is applied
// once, in order, inside one transaction by store.Migrate. Files are never edited after they have landed:
// a change to the schema is a new file. This package must not import any other package of coeval.
package migrations

import "embed"

// FS holds every *.sql migration file.
//
//go:embed *.sql
var FS embed.FS
