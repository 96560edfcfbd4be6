package scenario

import "testing"

// BenchmarkGenerate50k times a full default-size scenario (50,000 primary
// rows), files included.
func BenchmarkGenerate50k(b *testing.B) {
	dir := b.TempDir()
	for b.Loop() {
		if _, err := Generate(Config{Seed: 1}, dir); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkUpdate50k times one update of a 50,000-row scenario.
func BenchmarkUpdate50k(b *testing.B) {
	dir := b.TempDir()
	s, err := Generate(Config{Seed: 1}, dir)
	if err != nil {
		b.Fatal(err)
	}
	for b.Loop() {
		s.Release = 1
		if err := Update(s, dir, 2); err != nil {
			b.Fatal(err)
		}
	}
}
