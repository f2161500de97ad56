package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"text/tabwriter"

	"github.com/pertinent/pertinent/store"
)

// runProject manages projects from the command line, for installations scripted end to end;
// the browser's Project settings and Team pages do the same through the same store.
func runProject(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	const help = "usage: pertinent project create|list|add|prelabels [flags]"
	verb, fs, err := verbFlags("project", help, args, stderr)
	if err != nil {
		return err
	}
	var name, description, user, role, source, mode *string
	var needed *int
	var share *float64
	var off *bool
	switch verb {
	case "create":
		name = fs.String("name", "", "project name (required)")
		description = fs.String("description", "", "short description")
		needed = fs.Int("judgments", 3, "judgments needed per pair")
	case "add":
		name = fs.String("project", "", "project name (required)")
		user = fs.String("user", "", "username (required)")
		role = fs.String("role", "assessor", "assessor or lead")
	case "prelabels":
		name = fs.String("project", "", "project name (required)")
		source = fs.String("source", "", "the source whose grades choose what people judge first")
		mode = fs.String("mode", "", "least_sure (its least confident grades first) or audit (a random share of its grades first)")
		share = fs.Float64("share", 1, "share of the source's open pairs to put first, in (0, 1]")
		off = fs.Bool("off", false, "take the setting away: every pair back to its own priority")
	case "list":
	default:
		return errors.New(help)
	}
	st, err := fs.parseOpen(ctx, args[1:])
	if err != nil {
		return err
	}
	defer st.Close()
	switch verb {
	case "create":
		p, err := st.CreateProject(ctx, store.NewProject{Name: *name, Description: *description,
			JudgmentsPerPair: *needed, AllowChanges: true}, 0)
		if err != nil {
			return err
		}
		fmt.Fprintf(stdout, "created project %q (id %d) with the default 0-4 scale\n", p.Name, p.ID)
	case "add":
		p, err := st.ProjectByName(ctx, *name)
		if err != nil {
			return fmt.Errorf("no project named %q", *name)
		}
		u, err := st.UserByUsername(ctx, *user)
		if err != nil {
			return fmt.Errorf("no account named %q", *user)
		}
		if err := st.SetMember(ctx, p.ID, u.ID, store.Role(*role), 0); err != nil {
			return err
		}
		fmt.Fprintf(stdout, "%s is now %s of %q\n", u.Username, *role, p.Name)
	case "prelabels":
		p, err := st.ProjectByName(ctx, *name)
		if err != nil {
			return fmt.Errorf("no project named %q", *name)
		}
		var set *store.Prelabels
		switch {
		case *off && (*source != "" || *mode != ""):
			return errors.New("project prelabels: give --off, or --source and --mode, not both")
		case !*off:
			if *source == "" || *mode == "" {
				return errors.New("project prelabels: --source NAME and --mode least_sure|audit are needed (or --off)")
			}
			set = &store.Prelabels{Source: *source, Mode: store.PrelabelMode(*mode), Share: *share}
		}
		n, err := st.SetPrelabels(ctx, p.ID, 0, set)
		if err != nil {
			return err
		}
		if set == nil {
			fmt.Fprintf(stdout, "pre-labels off in %q: every pair has its own priority again\n", p.Name)
			return nil
		}
		fmt.Fprintf(stdout, "%d pairs of %q put first by %s's grades (%s); assessors never see its grades\n", n, p.Name, set.Source, set.Mode)
	case "list":
		ps, err := st.Projects(ctx)
		if err != nil {
			return err
		}
		tw := tabwriter.NewWriter(stdout, 0, 4, 2, ' ', 0)
		fmt.Fprintln(tw, "ID\tNAME\tJUDGMENTS/PAIR\tSTATE")
		for _, p := range ps {
			state := "open"
			if p.Archived {
				state = "archived"
			}
			fmt.Fprintf(tw, "%d\t%s\t%d\t%s\n", p.ID, p.Name, p.JudgmentsPerPair, state)
		}
		return tw.Flush()
	}
	return nil
}
