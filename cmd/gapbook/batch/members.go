package batch

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"os"
	"slices"
	"strings"
	"sync"

	"gapbook/notebook"
)

// PartVersion is the version of the part files written by RunShare.
const PartVersion = 1

// Part is the file one share of a study writes (docs/format.md, "Parts"):
// which study (the digest of its inputs), which share, and the members it
// computed.
type Part struct {
	Version int               `json:"gapbook-part"`
	Study   string            `json:"study"`
	Share   [2]int            `json:"share"`
	Members []notebook.Member `json:"members"`
}

// StudyDigest identifies a study by the inputs of all its cells: two
// studies with the same digest compute the same members.
func StudyDigest(nb *notebook.Notebook) string {
	h := sha256.New()
	for _, o := range nb.States() {
		fmt.Fprintf(h, "%q %q\n", o.ID, o.Hash)
	}
	return hex.EncodeToString(h.Sum(nil))
}

// share is the MemberStore of one share: it computes its members and keeps
// them.
type share struct {
	k, n    int
	mu      sync.Mutex
	members []notebook.Member
}

func (s *share) Lookup(notebook.MemberKey) (*notebook.Member, bool) { return nil, false }
func (s *share) Mine(k notebook.MemberKey) bool                     { return notebook.ShareOf(k, s.n) == s.k }
func (s *share) Done(m *notebook.Member) {
	s.mu.Lock()
	defer s.mu.Unlock()
	s.members = append(s.members, *m)
}

// ParseShare reads "K/N" (1 ≤ K ≤ N).
func ParseShare(s string) (k, n int, err error) {
	if _, err := fmt.Sscanf(s, "%d/%d", &k, &n); err != nil || n < 1 || k < 1 || k > n || fmt.Sprintf("%d/%d", k, n) != s {
		return 0, 0, fmt.Errorf("want the share as K/N with 1 ≤ K ≤ N, for example 2/8; got %q", s)
	}
	return k, n, nil
}

// RunShare evaluates the study at path computing only share k of n of its
// members, and writes them to out as a Part.
func RunShare(ctx context.Context, path string, k, n, workers int, out string) (*Part, error) {
	nb, err := load(path)
	if err != nil {
		return nil, err
	}
	st := &share{k: k, n: n}
	e := notebook.NewEngine()
	e.Workers = workers
	ev, err := e.Evaluate(ctx, nb, notebook.Options{Members: st})
	if err != nil {
		return nil, err
	}
	if ev.Canceled {
		return nil, fmt.Errorf("interrupted; no part written")
	}
	slices.SortFunc(st.members, func(a, b notebook.Member) int {
		if c := strings.Compare(a.Cell, b.Cell); c != 0 {
			return c
		}
		return a.Row - b.Row
	})
	part := &Part{Version: PartVersion, Study: StudyDigest(nb), Share: [2]int{k, n}, Members: st.members}
	b, err := json.MarshalIndent(part, "", " ")
	if err != nil {
		return nil, err
	}
	return part, WriteFileAtomic(out, append(b, '\n'))
}

// merged is the MemberStore of a merge: every member comes from a part.
type merged struct {
	n       int
	have    map[string]*notebook.Member
	mu      sync.Mutex
	missing map[int][]string
}

func (m *merged) Lookup(k notebook.MemberKey) (*notebook.Member, bool) {
	v, ok := m.have[k.ID()]
	return v, ok
}

func (m *merged) Mine(k notebook.MemberKey) bool {
	m.mu.Lock()
	defer m.mu.Unlock()
	s := notebook.ShareOf(k, m.n)
	m.missing[s] = append(m.missing[s], fmt.Sprintf("cell %s member %d", k.Cell, k.Row))
	return false
}

func (m *merged) Done(*notebook.Member) {}

// Merge folds the parts into the study at path: it checks that every part
// is of this study and that the shares 1..N are there once each, evaluates
// the study with every member taken from its part, and returns the study
// with the results saved, as a file.
func Merge(ctx context.Context, path string, parts []string) ([]byte, *notebook.Evaluation, error) {
	nb, err := load(path)
	if err != nil {
		return nil, nil, err
	}
	digest := StudyDigest(nb)
	st := &merged{have: map[string]*notebook.Member{}, missing: map[int][]string{}}
	seen := map[int]string{}
	for _, f := range parts {
		b, err := os.ReadFile(f)
		if err != nil {
			return nil, nil, err
		}
		var p Part
		if err := json.Unmarshal(b, &p); err != nil || p.Version != PartVersion {
			return nil, nil, fmt.Errorf("%s: not a part file of gapbook (version %d) (%v)", f, PartVersion, err)
		}
		if p.Study != digest {
			return nil, nil, fmt.Errorf("%s: a part of another version of the study (its inputs differ from %s's); run its share again", f, path)
		}
		if st.n == 0 {
			st.n = p.Share[1]
		}
		if p.Share[1] != st.n {
			return nil, nil, fmt.Errorf("%s: share %d/%d does not fit the other parts' %d shares", f, p.Share[0], p.Share[1], st.n)
		}
		if other, dup := seen[p.Share[0]]; dup {
			return nil, nil, fmt.Errorf("%s and %s are both share %d/%d", other, f, p.Share[0], st.n)
		}
		seen[p.Share[0]] = f
		for i := range p.Members {
			m := &p.Members[i]
			st.have[m.MemberKey.ID()] = m
		}
	}
	if st.n == 0 {
		return nil, nil, fmt.Errorf("no parts to merge")
	}
	ev, err := notebook.NewEngine().Evaluate(ctx, nb, notebook.Options{Members: st})
	if err != nil {
		return nil, nil, err
	}
	if ev.Canceled {
		return nil, nil, fmt.Errorf("interrupted; nothing merged")
	}
	if len(st.missing) > 0 {
		var lines []string
		for s := 1; s <= st.n; s++ {
			if ms := st.missing[s]; len(ms) > 0 {
				lines = append(lines, fmt.Sprintf("share %d/%d is missing (%s)", s, st.n, strings.Join(ms, ", ")))
			}
		}
		return nil, nil, fmt.Errorf("%s", strings.Join(lines, "; "))
	}
	for _, o := range ev.Cells {
		if o.Status == notebook.StatusOK {
			c, _ := nb.Cell(o.ID)
			c.Saved = &notebook.Saved{Hash: o.Hash, Digest: o.Digest, Results: o.Results}
		}
	}
	doc, err := notebook.Save(nb)
	return doc, ev, err
}

func load(path string) (*notebook.Notebook, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	nb, err := notebook.Load(data)
	if nb == nil {
		return nil, fmt.Errorf("%s:\n%v", path, err)
	}
	return nb, nil
}
