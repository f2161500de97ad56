package export

import (
	"bufio"
	"io"
	"sort"
	"strconv"
	"strings"

	"github.com/pertinent/pertinent"
)

// QIDMap maps external query ids to the positive integers the SVMlight
// format needs. Numbers are assigned in first-seen order, after the
// highest number of any map it was started from, so an earlier export's
// map keeps its numbers stable.
type QIDMap struct {
	ids  map[string]int
	next int
}

// NewQIDMap returns an empty map; the first query seen gets qid 1.
func NewQIDMap() *QIDMap {
	return &QIDMap{ids: make(map[string]int), next: 1}
}

// QIDMapFrom starts from a given mapping. Numbers must be positive and
// distinct; queries not in it get numbers after the highest given.
func QIDMapFrom(given map[string]int) (*QIDMap, error) {
	m := NewQIDMap()
	used := make(map[int]string, len(given))
	for q, n := range given {
		if n < 1 {
			return nil, pertinent.Errorf(pertinent.Invalid, "export", "qid %d for query %q is not positive", n, q)
		}
		if other, dup := used[n]; dup {
			return nil, pertinent.Errorf(pertinent.Invalid, "export", "qid %d given to both %q and %q", n, other, q)
		}
		if err := checkQIDMapKey(q); err != nil {
			return nil, err
		}
		used[n] = q
		m.ids[q] = n
		if n >= m.next {
			m.next = n + 1
		}
	}
	return m, nil
}

// QID returns the number of query, assigning the next one if it is new.
func (m *QIDMap) QID(query string) int {
	if n, ok := m.ids[query]; ok {
		return n
	}
	n := m.next
	m.ids[query] = n
	m.next++
	return n
}

// Len is the number of mapped queries.
func (m *QIDMap) Len() int { return len(m.ids) }

// Map returns a copy of the mapping.
func (m *QIDMap) Map() map[string]int {
	out := make(map[string]int, len(m.ids))
	for q, n := range m.ids {
		out[q] = n
	}
	return out
}

// WriteTSV writes "<qid>\t<query-id>" lines in ascending qid order.
func (m *QIDMap) WriteTSV(w io.Writer) error {
	qs := make([]string, 0, len(m.ids))
	for q := range m.ids {
		if err := checkQIDMapKey(q); err != nil {
			return err
		}
		qs = append(qs, q)
	}
	sort.Slice(qs, func(i, j int) bool { return m.ids[qs[i]] < m.ids[qs[j]] })
	bw := bufio.NewWriter(w)
	var b []byte
	for _, q := range qs {
		b = strconv.AppendInt(b[:0], int64(m.ids[q]), 10)
		b = append(b, '\t')
		b = append(b, q...)
		b = append(b, '\n')
		if _, err := bw.Write(b); err != nil {
			return err
		}
	}
	return bw.Flush()
}

// ReadQIDMapTSV reads what WriteTSV wrote, to keep numbers stable across
// exports.
func ReadQIDMapTSV(r io.Reader) (*QIDMap, error) {
	given := make(map[string]int)
	sc := bufio.NewScanner(r)
	sc.Buffer(make([]byte, 64*1024), 1024*1024)
	line := 0
	for sc.Scan() {
		line++
		s := sc.Text()
		if s == "" {
			continue
		}
		num, q, ok := strings.Cut(s, "\t")
		if !ok {
			return nil, pertinent.Errorf(pertinent.Invalid, "export", "qid map line %d: no tab", line)
		}
		n, err := strconv.Atoi(num)
		if err != nil {
			return nil, pertinent.Errorf(pertinent.Invalid, "export", "qid map line %d: %v", line, err)
		}
		if _, dup := given[q]; dup {
			return nil, pertinent.Errorf(pertinent.Invalid, "export", "qid map line %d: query %q listed twice", line, q)
		}
		given[q] = n
	}
	if err := sc.Err(); err != nil {
		return nil, err
	}
	return QIDMapFrom(given)
}

func checkQIDMapKey(q string) error {
	if q == "" || strings.ContainsAny(q, "\t\r\n") {
		return pertinent.Errorf(pertinent.Invalid, "export", "query id %q cannot be written to a qid map (empty, or has a tab or line break)", q)
	}
	return nil
}
