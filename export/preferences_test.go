package export

import (
	"bytes"
	"testing"
)

func TestPreferencePairsFiles(t *testing.T) {
	pairs := []PreferencePair{{"q1", "d2", "d1", 3}, {"q1", "d1", "d2", 1}, {"q,2", "a\"b", "c", 2}}
	var b bytes.Buffer
	if err := WritePreferencePairsCSV(&b, pairs); err != nil {
		t.Fatal(err)
	}
	// RFC 4180 quoting: the comma and the quote make their fields quoted, a quote doubled.
	if want := "query,better,worse,count\nq1,d2,d1,3\nq1,d1,d2,1\n\"q,2\",\"a\"\"b\",c,2\n"; b.String() != want {
		t.Errorf("CSV:\n%s\nwant\n%s", b.String(), want)
	}
	b.Reset()
	if err := WritePreferencePairsJSONL(&b, pairs[:1]); err != nil {
		t.Fatal(err)
	}
	if want := `{"query":"q1","better":"d2","worse":"d1","count":3}` + "\n"; b.String() != want {
		t.Errorf("JSON Lines: %s, want %s", b.String(), want)
	}
}
