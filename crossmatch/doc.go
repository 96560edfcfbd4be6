// Package crossmatch is part of starvet; see DEVELOPERS.md.
package crossmatch
