package ingest

import (
	"errors"
	"reflect"
	"strings"
	"testing"
)

// all runs a reader over src and returns the records it accepted.
func all[T any](t *testing.T, src string, read func(r *strings.Reader, fn func(T) error) error) ([]T, error) {
	t.Helper()
	var out []T
	err := read(strings.NewReader(src), func(v T) error {
		out = append(out, v)
		return nil
	})
	return out, err
}

// wantProblems checks err is a *Problems whose messages are exactly want.
func wantProblems(t *testing.T, err error, want ...string) {
	t.Helper()
	var ps *Problems
	if !errors.As(err, &ps) {
		t.Fatalf("error = %v, want *Problems", err)
	}
	var got []string
	for _, p := range ps.List {
		got = append(got, p.Error())
	}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("problems:\n%s\nwant:\n%s", strings.Join(got, "\n"), strings.Join(want, "\n"))
	}
}

// wantRead checks what a reader returned: no error, and exactly the records want.
func wantRead[T any](t *testing.T, got []T, err error, want []T) {
	t.Helper()
	if err != nil {
		t.Fatal(err)
	}
	mustEqual(t, got, want)
}

func mustEqual(t *testing.T, got, want any) {
	t.Helper()
	if !reflect.DeepEqual(got, want) {
		t.Errorf("got  %#v\nwant %#v", got, want)
	}
}
