package main

import (
	"bufio"
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"strings"
	"text/tabwriter"

	"github.com/pertinent/pertinent/store"
)

// runUser manages accounts from the command line: the way to create the first admin.
func runUser(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	const help = "usage: pertinent user add|list|disable|enable|set-password [flags] [username]"
	verb, fs, err := verbFlags("user", help, args, stderr)
	if err != nil {
		return err
	}
	var role, name, pwFile *string
	if verb == "add" {
		role = fs.String("role", "assessor", "admin, lead or assessor")
		name = fs.String("name", "", "display name")
	}
	if verb == "add" || verb == "set-password" {
		pwFile = fs.String("password-file", "", "read the password from this file ('-' for standard input) instead of generating one")
	}
	st, err := fs.parseOpen(ctx, args[1:])
	if err != nil {
		return err
	}
	defer st.Close()

	if verb == "list" {
		users, err := st.Users(ctx)
		if err != nil {
			return err
		}
		tw := tabwriter.NewWriter(stdout, 0, 4, 2, ' ', 0)
		fmt.Fprintln(tw, "USERNAME\tNAME\tROLE\tSTATE")
		for _, u := range users {
			state := "active"
			if u.Disabled {
				state = "disabled"
			}
			fmt.Fprintf(tw, "%s\t%s\t%s\t%s\n", u.Username, u.DisplayName, u.Role, state)
		}
		return tw.Flush()
	}
	if fs.NArg() != 1 {
		return errors.New(help)
	}
	username := fs.Arg(0)
	switch verb {
	case "add":
		pw, generated, err := password(*pwFile)
		if err != nil {
			return err
		}
		if _, err := st.CreateUser(ctx, username, *name, store.Role(*role), pw); err != nil {
			return err
		}
		fmt.Fprintf(stdout, "added %s %s", *role, username)
		if generated {
			fmt.Fprintf(stdout, " with password %s", pw)
		}
		fmt.Fprintln(stdout)
		return nil
	case "disable", "enable", "set-password":
		u, err := st.UserByUsername(ctx, username)
		if err != nil {
			return fmt.Errorf("no account named %s", username)
		}
		if verb == "set-password" {
			pw, generated, err := password(*pwFile)
			if err != nil {
				return err
			}
			if err := st.SetPassword(ctx, u.ID, pw); err != nil {
				return err
			}
			if generated {
				fmt.Fprintf(stdout, "new password for %s: %s\n", username, pw)
			} else {
				fmt.Fprintf(stdout, "password of %s changed\n", username)
			}
			return nil
		}
		if err := st.SetUserDisabled(ctx, u.ID, verb == "disable", 0); err != nil {
			return err
		}
		fmt.Fprintf(stdout, "%sd %s\n", verb, username)
		return nil
	}
	return errors.New(help)
}

// password reads a password from a file or standard input, or generates one.
func password(file string) (pw string, generated bool, err error) {
	if file == "" {
		return newPassword(), true, nil
	}
	var r io.Reader = os.Stdin
	if file != "-" {
		f, err := os.Open(file)
		if err != nil {
			return "", false, err
		}
		defer f.Close()
		r = f
	}
	line, err := bufio.NewReader(r).ReadString('\n')
	if err != nil && err != io.EOF {
		return "", false, err
	}
	return strings.TrimRight(line, "\r\n"), false, nil
}
