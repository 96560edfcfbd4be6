// Package quality is part of starvet; see DEVELOPERS.md.
package quality
