// Package spelling suggests the intended name for a misspelt one, for error
// messages such as `unknown key "sampel_rate" (did you mean "sample_rate"?)`.
package spelling

// Nearest returns the candidate closest to word by edit distance, or "" if
// none is close. Close means within two edits and fewer edits than word has
// characters, so a one-letter name is never "corrected" into an unrelated
// one. Ties go to the earliest candidate.
func Nearest(word string, candidateLists ...[]string) string {
	best, bestDistance := "", min(3, len(word))
	for _, candidates := range candidateLists {
		for _, c := range candidates {
			if d := Distance(word, c); d < bestDistance {
				best, bestDistance = c, d
			}
		}
	}
	return best
}

// Distance returns the Levenshtein distance between a and b: the least
// number of single-byte insertions, deletions and substitutions that turn
// one into the other.
func Distance(a, b string) int {
	// prev[j] holds the distance between the prefix of a scanned so far and
	// b[:j]; only one row of the table is needed at a time.
	prev := make([]int, len(b)+1)
	curr := make([]int, len(b)+1)
	for j := range prev {
		prev[j] = j
	}
	for i := 1; i <= len(a); i++ {
		curr[0] = i
		for j := 1; j <= len(b); j++ {
			substitution := prev[j-1]
			if a[i-1] != b[j-1] {
				substitution++
			}
			curr[j] = min(prev[j]+1, curr[j-1]+1, substitution)
		}
		prev, curr = curr, prev
	}
	return prev[len(b)]
}
