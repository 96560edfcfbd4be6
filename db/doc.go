// Package db is part of starvet; see DEVELOPERS.md.
package db
