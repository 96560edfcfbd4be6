// Package sky is part of starvet; see DEVELOPERS.md.
package sky
