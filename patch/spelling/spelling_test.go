package spelling

import "testing"

func TestDistance(t *testing.T) {
	// Levenshtein distances worked out by hand.
	tests := []struct {
		a, b string
		want int
	}{
		{"", "", 0},
		{"", "abc", 3},
		{"abc", "", 3},
		{"ratio", "ratio", 0},
		{"ratoi", "ratio", 2},
		{"kitten", "sitting", 3},
		{"sqr", "sqrt", 1},
	}
	for _, tt := range tests {
		if got := Distance(tt.a, tt.b); got != tt.want {
			t.Errorf("Distance(%q, %q) = %d; want %d", tt.a, tt.b, got, tt.want)
		}
	}
}

func TestNearest(t *testing.T) {
	keys := []string{"sample_rate", "bit_depth", "channels", "tuning"}
	tests := []struct{ word, want string }{
		{"sampel_rate", "sample_rate"},
		{"chanels", "channels"},
		{"q", ""}, // one letter is never corrected into an unrelated name
		{"volume", ""},
	}
	for _, tt := range tests {
		if got := Nearest(tt.word, keys); got != tt.want {
			t.Errorf("Nearest(%q) = %q; want %q", tt.word, got, tt.want)
		}
	}
}
