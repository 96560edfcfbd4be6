// Package catalog is part of starvet; see DEVELOPERS.md.
package catalog
