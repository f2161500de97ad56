package main

import (
	"bytes"
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// A password handed over in a file is used but never echoed: not by `user add`, not by
// `user set-password`, neither on standard output nor on standard error.
func TestUserPasswordFileIsNeverPrinted(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	db := filepath.Join(dir, "p.db")
	const first, second = "Orchid-Lantern-5521", "Basalt-Meadow-0917"
	write := func(name, pw string) string {
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, []byte(pw+"\n"), 0o600); err != nil {
			t.Fatal(err)
		}
		return p
	}
	var out, errb bytes.Buffer
	if err := run(ctx, []string{"user", "add", "--db", db, "--role", "admin", "--name", "Ida", "--password-file", write("one", first), "ida"}, &out, &errb); err != nil {
		t.Fatalf("user add: %v (%s)", err, errb.String())
	}
	if err := run(ctx, []string{"user", "set-password", "--db", db, "--password-file", write("two", second), "ida"}, &out, &errb); err != nil {
		t.Fatalf("user set-password: %v (%s)", err, errb.String())
	}
	printed := out.String() + errb.String()
	for _, pw := range []string{first, second} {
		if strings.Contains(printed, pw) {
			t.Errorf("the command printed the password %q:\n%s", pw, printed)
		}
	}
	if !strings.Contains(out.String(), "added admin ida") || !strings.Contains(out.String(), "password of ida changed") {
		t.Errorf("output does not confirm the two changes:\n%s", out.String())
	}
	// The file's password (without its line end) is the one that now signs in.
	st := openTestStore(t, db)
	if _, err := st.Authenticate(ctx, "ida", second); err != nil {
		t.Errorf("the password from the file does not sign in: %v", err)
	}
	if _, err := st.Authenticate(ctx, "ida", first); err == nil {
		t.Errorf("the replaced password still signs in")
	}
}
