package main

import (
	"fmt"
	"sync"

	"gapbook/notebook"
)

// pageStore is the MemberStore of one run in the page (docs/
// architecture.md, "Members in the page"): it supplies the members the page
// already has (computed by helper workers, or before a stop), computes its
// share of the others (all of them when share is nil) and tells the page of
// every member it finishes, so that a stop keeps them.
type pageStore struct {
	have  map[string]*notebook.Member
	share []int
	post  func(m *notebook.Member)
	mu    sync.Mutex
	n     int
}

func newPageStore(supply []notebook.Member, share []int, post func(*notebook.Member)) (*pageStore, error) {
	if share != nil && (len(share) != 2 || share[1] < 1 || share[0] < 1 || share[0] > share[1]) {
		return nil, fmt.Errorf("run: share %v is not K/N with 1 ≤ K ≤ N", share)
	}
	s := &pageStore{have: map[string]*notebook.Member{}, share: share, post: post}
	for i := range supply {
		m := &supply[i]
		s.have[m.ID()] = m
	}
	return s, nil
}

func (s *pageStore) Lookup(k notebook.MemberKey) (*notebook.Member, bool) {
	m, ok := s.have[k.ID()]
	if !ok {
		return nil, false
	}
	// The page's copy knows no cell index (it is not in the file).
	c := *m
	c.Index = k.Index
	return &c, true
}

func (s *pageStore) Mine(k notebook.MemberKey) bool {
	return s.share == nil || notebook.ShareOf(k, s.share[1]) == s.share[0]
}

func (s *pageStore) Done(m *notebook.Member) {
	s.mu.Lock()
	defer s.mu.Unlock()
	s.n++
	if s.post != nil {
		s.post(m)
	}
}

// computed is the number of members this run computed.
func (s *pageStore) computed() int {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.n
}
