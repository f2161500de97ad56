package ingest

import "hash/maphash"

// seen remembers keys by a 64-bit hash and the line they were first on:
// about 40 bytes per key in a Go map, so 1,000,000 ids cost some 40 MB
// whatever their length, and no key string is kept alive. With a random
// seed per file, a false duplicate among a million keys has a probability
// near 3e-8.
type seen struct {
	seed maphash.Seed
	h    maphash.Hash
	m    map[uint64]int
}

func newSeen() *seen {
	s := &seen{seed: maphash.MakeSeed(), m: map[uint64]int{}}
	s.h.SetSeed(s.seed)
	return s
}

// key hashes one or more parts; ids never contain NUL, so parts cannot run
// into each other.
func (s *seen) key(parts ...string) uint64 {
	s.h.Reset()
	for i, p := range parts {
		if i > 0 {
			s.h.WriteByte(0)
		}
		s.h.WriteString(p)
	}
	return s.h.Sum64()
}

// add records k at line and returns the earlier line if k was seen before.
func (s *seen) add(k uint64, line int) (first int, dup bool) {
	if first, dup = s.m[k]; dup {
		return first, true
	}
	s.m[k] = line
	return 0, false
}
