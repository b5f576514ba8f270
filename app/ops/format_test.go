package ops

import "testing"

// English plurals of the nouns the messages count (common practice: -es
// after s, x, z, ch and sh).
func TestPlural(t *testing.T) {
	for _, c := range []struct {
		n          int
		word, want string
	}{
		{1, "box", "1 box"}, {2, "box", "2 boxes"}, {3, "match", "3 matches"}, {0, "class", "0 classes"},
		{2, "image", "2 images"}, {5, "consensus box", "5 consensus boxes"},
	} {
		if got := Plural(c.n, c.word); got != c.want {
			t.Errorf("Plural(%d, %q) = %q, want %q", c.n, c.word, got, c.want)
		}
	}
}
