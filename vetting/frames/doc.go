// Package frames is part of starvet; see DEVELOPERS.md.
package frames
