// Package vetting is part of starvet; see DEVELOPERS.md.
package vetting
