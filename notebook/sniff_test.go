package notebook

import (
	"strings"
	"testing"
)

// Sniff accepts what Load opens and refuses, with Load's words, what Load
// cannot open at all; a byte-order mark is accepted by both.
func TestSniff(t *testing.T) {
	cases := []struct {
		doc, err string
	}{
		{`{"gapbook": 2, "cells": [{"id": "a", "kind": "memo", "inputs": {"gapbook": 9}}], "title": "x"}`, ""},
		{"\uFEFF" + `{"extra": {"gapbook": 7}, "gapbook": 1, "cells": []}`, ""},
		{`{"cells": [], "title": "t"}`, "missing"},
		{`{"gapbook": 3, "cells": []}`, "newer than this gapbook reads"},
		{`{"gapbook": "two", "cells": []}`, "want a format version"},
		{`[1, 2]`, "want a JSON object"},
		{`{"gapbook": 2, "cells": [`, "not valid JSON"},
		{`{"gapbook": 2} {}`, "unexpected data after the document"},
		{"{\"gapbook\": 2, \"t\": \"\xff\"}", "not valid UTF-8"},
		{`{"gapbook": 2, "d": ` + strings.Repeat("[", 70) + strings.Repeat("]", 70) + `}`, "nesting deeper"},
	}
	for _, c := range cases {
		err := Sniff([]byte(c.doc))
		if c.err == "" && err != nil || c.err != "" && (err == nil || !strings.Contains(err.Error(), c.err)) {
			t.Errorf("Sniff(%.60q) = %v; want %q", c.doc, err, c.err)
		}
		if c.err == "" {
			if nb, err := Load([]byte(c.doc)); nb == nil {
				t.Errorf("Load refuses what Sniff accepts: %.60q: %v", c.doc, err)
			}
		}
	}
}
