package main

import (
	"context"
	"crypto/rand"
	"errors"
	"fmt"
	"io"
	"strings"

	"github.com/pertinent/pertinent/store"
)

// runDemo opens (or creates) a demo database, fills it with the invented collection on first
// use, gives the demo accounts fresh passwords, prints them, and serves the site.
func runDemo(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	f, log, st, err := openToServe(ctx, "demo", "pertinent-demo.db", args, stderr)
	if err != nil {
		return err
	}
	defer st.Close()
	accounts, err := seedDemo(ctx, st)
	if err != nil {
		return err
	}
	return serve(ctx, st, f, log, func(addr string) {
		fmt.Fprintf(stdout, "pertinent demo: %s\nopen http://%s/ and sign in as one of:\n", store.DatabaseName(*f.db), addr)
		for _, a := range accounts {
			fmt.Fprintf(stdout, "%s %s %s\n", a.role, a.username, a.password)
		}
		fmt.Fprintln(stdout, "press Ctrl-C to stop")
	})
}

type demoAccount struct {
	role     store.Role
	username string
	password string
}

// seedDemo loads the demo collection unless the file has it already, and sets new passwords
// on the demo accounts: passwords are never kept in clear, so each start prints new ones.
func seedDemo(ctx context.Context, st *store.Store) ([]demoAccount, error) {
	if _, err := st.ProjectByName(ctx, demoProjectName); errors.Is(err, store.ErrNotFound) {
		c := buildDemoCollection()
		if err := loadDemoCollection(ctx, st, c); err != nil {
			return nil, fmt.Errorf("demo collection: %w", err)
		}
		if err := keepDemoRuns(ctx, st, c); err != nil {
			return nil, fmt.Errorf("demo runs: %w", err)
		}
		if err := addDemoExtras(ctx, st, c); err != nil {
			return nil, err
		}
	} else if err != nil {
		return nil, err
	}
	// A demo file from before the preference project gets it on its next start.
	if err := addDemoPreferences(ctx, st); err != nil {
		return nil, fmt.Errorf("demo preference project: %w", err)
	}
	var out []demoAccount
	for _, p := range demoPeople {
		u, err := st.UserByUsername(ctx, p.username)
		if err != nil {
			return nil, fmt.Errorf("demo account %s: %w", p.username, err)
		}
		pw := newPassword()
		if err := st.SetPassword(ctx, u.ID, pw); err != nil {
			return nil, err
		}
		out = append(out, demoAccount{p.role, p.username, pw})
	}
	return out, nil
}

// newPassword returns a random password that is easy to read aloud: 16 base32 characters
// (80 bits) in groups of four.
func newPassword() string {
	t := strings.ToLower(rand.Text()[:16])
	return t[0:4] + "-" + t[4:8] + "-" + t[8:12] + "-" + t[12:16]
}
