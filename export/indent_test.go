package export

import (
	"bufio"
	"bytes"
	"encoding/json"
	"math/rand/v2"
	"testing"
)

// writeIndented indents as encoding/json does (json.MarshalIndent with two
// spaces is the reference), on random values whose strings hold the
// characters that matter to it: quotes, backslashes, braces, brackets,
// commas and colons.
func TestWriteIndentedMatchesMarshalIndent(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	pieces := []string{`"`, `\`, "{", "}", "[", "]", ",", ":", " ", "a", "\n", "é", `\"`}
	var value func(depth int) any
	value = func(depth int) any {
		switch k := rng.IntN(7); {
		case k == 0 && depth < 4:
			m := map[string]any{}
			for range rng.IntN(4) {
				var key bytes.Buffer
				for range rng.IntN(4) {
					key.WriteString(pieces[rng.IntN(len(pieces))])
				}
				m[key.String()] = value(depth + 1)
			}
			return m
		case k == 1 && depth < 4:
			a := make([]any, rng.IntN(4))
			for i := range a {
				a[i] = value(depth + 1)
			}
			return a
		case k == 2:
			var s bytes.Buffer
			for range rng.IntN(6) {
				s.WriteString(pieces[rng.IntN(len(pieces))])
			}
			return s.String()
		case k == 3:
			return rng.NormFloat64() * 1e3
		case k == 4:
			return rng.IntN(2) == 0
		case k == 5:
			return nil
		}
		return []any{}
	}
	for i := range 3000 {
		v := value(0)
		want, err := json.MarshalIndent(v, "", "  ")
		if err != nil {
			t.Fatal(err)
		}
		compact, err := json.Marshal(v)
		if err != nil {
			t.Fatal(err)
		}
		var got bytes.Buffer
		w := bufio.NewWriter(&got)
		writeIndented(w, compact)
		if err := w.Flush(); err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(got.Bytes(), want) {
			t.Fatalf("case %d: got\n%s\nwant\n%s", i, got.Bytes(), want)
		}
	}
}
