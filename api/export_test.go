package api

import "crypto/sha256"

// KeyCached reports whether the server would answer token from its key
// cache (its listener listening and the key held).
func KeyCached(s *Server, token string) bool {
	s.keys.mu.Lock()
	defer s.keys.mu.Unlock()
	_, ok := s.keys.keys[sha256.Sum256([]byte(token))]
	return ok && s.keys.live
}
