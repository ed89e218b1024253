package capture

import (
	"fmt"
	"strings"
)

// suggestName returns `; did you mean "x"?` when one of names is close to
// name (edit distance at most 2, or a third of the name's length for long
// names, ignoring case), else "".
func suggestName(name string, names []string) string {
	if s, ok := closest(name, names); ok {
		return fmt.Sprintf("; did you mean %q?", s)
	}
	return ""
}

func closest(name string, names []string) (string, bool) {
	limit := max(2, len(name)/3)
	best, bestD := "", limit+1
	lname := strings.ToLower(name)
	for _, n := range names {
		d := editDistance(lname, strings.ToLower(n))
		if d < bestD || (d == bestD && n < best) {
			best, bestD = n, d
		}
	}
	return best, best != "" && bestD <= limit
}

// editDistance is the Levenshtein distance between a and b, in bytes. The
// inputs are short names, so the cost is bounded by truncating them.
func editDistance(a, b string) int {
	const maxLen = 64
	if len(a) > maxLen {
		a = a[:maxLen]
	}
	if len(b) > maxLen {
		b = b[:maxLen]
	}
	prev := make([]int, len(b)+1)
	cur := make([]int, len(b)+1)
	for j := range prev {
		prev[j] = j
	}
	for i := 1; i <= len(a); i++ {
		cur[0] = i
		for j := 1; j <= len(b); j++ {
			cost := 1
			if a[i-1] == b[j-1] {
				cost = 0
			}
			cur[j] = min(prev[j]+1, cur[j-1]+1, prev[j-1]+cost)
		}
		prev, cur = cur, prev
	}
	return prev[len(b)]
}

// SuggestName returns `; did you mean "x"?` when one of names is close to
// name, else "": the one did-you-mean rule of Patina's messages.
func SuggestName(name string, names []string) string { return suggestName(name, names) }
