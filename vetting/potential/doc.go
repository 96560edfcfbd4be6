// Package potential is part of starvet; see DEVELOPERS.md.
package potential
