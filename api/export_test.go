package api

import (
	"crypto/sha256"
	"time"
)

// KeyCached reports whether the server would answer token from its key
// cache (its listener listening and the key held).
func KeyCached(s *Server, token string) bool {
	s.keys.mu.Lock()
	defer s.keys.mu.Unlock()
	_, ok := s.keys.keys[sha256.Sum256([]byte(token))]
	return ok && s.keys.live
}

// HoldExports takes every records-bundle slot, as bundles being written
// would; release gives them back.
func HoldExports(s *Server) (release func()) {
	n := cap(s.exports)
	for range n {
		s.exports <- struct{}{}
	}
	return func() {
		for range n {
			<-s.exports
		}
	}
}

// SetFiguresTTL sets how long the metrics keep the figures read from the
// database, so a test can read them afresh at each scrape.
func SetFiguresTTL(s *Server, d time.Duration) {
	s.figures.mu.Lock()
	defer s.figures.mu.Unlock()
	s.figures.ttl = d
}
