// Package rules is part of starvet; see DEVELOPERS.md.
package rules
