// Command pertinent runs the pertinent server and its administrative commands.
package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"os/signal"
	"sort"
	"syscall"

	"github.com/pertinent/pertinent/store"
)

// command is one subcommand: it parses its own flags from args.
type command struct {
	run   func(ctx context.Context, args []string, stdout, stderr io.Writer) error
	brief string
}

var commands = map[string]command{
	"serve":     {runServe, "serve the web application"},
	"demo":      {runDemo, "create or reuse a demo database with an invented collection, and serve it"},
	"migrate":   {runMigrate, "apply pending database migrations"},
	"user":      {runUser, "manage accounts: add, list, disable, enable, set-password"},
	"backup":    {runBackup, "copy a live database to a new file, consistently"},
	"copy":      {runCopy, "move an installation from its SQLite file into a PostgreSQL database, checked row for row"},
	"loadtest":  {runLoadtest, "drive virtual assessors against a server on loopback and report throughput"},
	"agreement": {runAgreement, "inter-assessor agreement of a CSV of judgments or of a project"},
	"export":    {runExport, "write a project's final grades as a training set (SVMlight, qrels, CSV, JSONL) with a manifest"},
	"evaluate":  {runEvaluate, "score a ranker's run, or compare two, against a project's final grades"},
	"plan":      {runPlan, "choose which pairs to judge from kept runs, under a judging design"},
	"project":   {runProject, "create and list projects, add people to them"},
	"import":    {runImport, "bring queries, documents, pairs, runs, qrels or features into a project"},
}

func main() {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer stop()
	if err := run(ctx, os.Args[1:], os.Stdout, os.Stderr); err != nil {
		fmt.Fprintln(os.Stderr, "pertinent:", err)
		os.Exit(2)
	}
}

func run(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	if len(args) == 0 || args[0] == "help" || args[0] == "-h" || args[0] == "--help" {
		usage(stderr)
		if len(args) == 0 {
			return errors.New("no command given")
		}
		return nil
	}
	c, ok := commands[args[0]]
	if !ok {
		usage(stderr)
		return fmt.Errorf("unknown command %q", args[0])
	}
	// -h on any command has printed its flags: that is not a failure.
	if err := c.run(ctx, args[1:], stdout, stderr); !errors.Is(err, flag.ErrHelp) {
		return err
	}
	return nil
}

func usage(w io.Writer) {
	fmt.Fprintln(w, "usage: pertinent <command> [flags]\n\ncommands:")
	names := make([]string, 0, len(commands))
	for n := range commands {
		names = append(names, n)
	}
	sort.Strings(names)
	for _, n := range names {
		fmt.Fprintf(w, "  %-10s %s\n", n, commands[n].brief)
	}
	fmt.Fprintln(w, "\nRun 'pertinent <command> -h' for a command's flags.")
}

// env returns the environment variable's value, or def when it is unset, so every flag can
// fall back to a PERTINENT_* variable.
func env(name, def string) string {
	if v, ok := os.LookupEnv(name); ok {
		return v
	}
	return def
}

func envBool(name string, def bool) bool {
	switch env(name, "") {
	case "1", "true", "yes", "on":
		return true
	case "0", "false", "no", "off":
		return false
	}
	return def
}

// dbFlag adds the --db flag shared by every command that opens the database.
func dbFlag(fs *flag.FlagSet, def string) *string {
	return fs.String("db", env("PERTINENT_DB", def), "SQLite database file, or a postgres:// connection string (env PERTINENT_DB)")
}

// openProject opens the database and finds a project by name; the caller closes the store.
// Only a missing project reads as one: any other error is passed on as it is.
func openProject(ctx context.Context, db, name string) (*store.Store, store.Project, error) {
	st, err := store.Open(ctx, db)
	if err != nil {
		return nil, store.Project{}, err
	}
	p, err := st.ProjectByName(ctx, name)
	if err != nil {
		st.Close()
		if errors.Is(err, store.ErrNotFound) {
			err = fmt.Errorf("no project named %q in %s", name, store.DatabaseName(db))
		}
		return nil, store.Project{}, err
	}
	return st, p, nil
}

func newFlags(name string, stderr io.Writer) *flag.FlagSet {
	fs := flag.NewFlagSet(name, flag.ContinueOnError)
	fs.SetOutput(stderr)
	return fs
}

// dbFlags is the flag set of a command that works on one database: --db (default
// pertinent.db, or a postgres:// connection string) plus the command's own flags.
type dbFlags struct {
	*flag.FlagSet
	db *string
}

func newDBFlags(name string, stderr io.Writer) dbFlags {
	fs := newFlags(name, stderr)
	return dbFlags{FlagSet: fs, db: dbFlag(fs, "pertinent.db")}
}

// open opens the database --db names; the caller closes the store. Commands check their
// other flags first, so that a mistyped command creates no database file.
func (f dbFlags) open(ctx context.Context) (*store.Store, error) {
	return store.Open(ctx, *f.db)
}

// openProject opens the database --db names and finds the project called name.
func (f dbFlags) openProject(ctx context.Context, name string) (*store.Store, store.Project, error) {
	return openProject(ctx, *f.db, name)
}

// parseOpen parses args and opens the database, for commands with nothing to check in between.
func (f dbFlags) parseOpen(ctx context.Context, args []string) (*store.Store, error) {
	if err := f.Parse(args); err != nil {
		return nil, err
	}
	return f.open(ctx)
}

// verbFlags starts a command whose first argument is a verb ("user add", "project list"):
// it returns the verb and a flag set named after both, or help as the error when no verb is given.
func verbFlags(name, help string, args []string, stderr io.Writer) (string, dbFlags, error) {
	if len(args) == 0 {
		return "", dbFlags{}, errors.New(help)
	}
	return args[0], newDBFlags(name+" "+args[0], stderr), nil
}
