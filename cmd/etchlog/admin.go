package main

import (
	"context"
	"fmt"
	"io"
	"slices"

	"etchlog/cmd/etchlog/localpg"
	"etchlog/db"
)

// cmdMigrate applies (up) or rolls back (down) the embedded migrations.
func cmdMigrate(ctx context.Context, args []string, getenv func(string) string, stdout, stderr io.Writer) error {
	c := defaults(getenv)
	fs := newFlagSet("migrate", "migrate [flags] up|down",
		"Applies (up, the default) or rolls back (down) every embedded database migration.")
	c.databaseFlag(fs)
	if err := parseFlags(fs, args, stdout, stderr); err != nil {
		return err
	}
	dir := "up"
	switch fs.NArg() {
	case 0:
	case 1:
		dir = fs.Arg(0)
	default:
		return fmt.Errorf("migrate: want one direction, up or down, got %q", fs.Args())
	}
	if dir != "up" && dir != "down" {
		return fmt.Errorf("migrate: want up or down, got %q", dir)
	}
	d, err := localpg.Resolve(ctx, func(k string) string {
		if k == "DATABASE_URL" {
			return c.DatabaseURL
		}
		return ""
	}, localpg.Options{})
	if err != nil {
		return err
	}
	if err := db.Migrate(d.URL, dir); err != nil {
		return err
	}
	fmt.Fprintf(stdout, "migrate %s: done (%s)\n", dir, redact(d.URL))
	return nil
}

// userUsage is the usage of "etchlog user" without a known subcommand.
const userUsage = `usage: etchlog user add -name NAME -role technician|engineer|auditor [-site SITE] [flags]

Creates or replaces an API user and prints its token once.
Run "etchlog user add -h" for the flags.`

// cmdUser creates or replaces an API user and prints the new token once.
func cmdUser(ctx context.Context, args []string, getenv func(string) string, stdout, stderr io.Writer) error {
	if len(args) > 0 && slices.Contains([]string{"-h", "-help", "--help", "help"}, args[0]) {
		fmt.Fprintln(stdout, userUsage)
		return nil
	}
	if len(args) == 0 || args[0] != "add" {
		fmt.Fprintln(stderr, userUsage)
		return fmt.Errorf("user: want \"user add\"")
	}
	var name, role, site string
	c := defaults(getenv)
	fs := newFlagSet("user add", "user add -name NAME -role technician|engineer|auditor [-site SITE] [flags]",
		"Creates or replaces an API user and prints its token once (only its SHA-256 is stored).")
	fs.StringVar(&name, "name", "", "user name (required)")
	fs.StringVar(&role, "role", "", "technician, engineer or auditor (required)")
	fs.StringVar(&site, "site", "main", "site (tenant) the user belongs to")
	c.databaseFlag(fs)
	if err := parseFlags(fs, args[1:], stdout, stderr); err != nil {
		return err
	}
	if fs.NArg() > 0 {
		return fmt.Errorf("user add: unexpected argument %q", fs.Arg(0))
	}
	if name == "" || !slices.Contains([]string{db.RoleTechnician, db.RoleEngineer, db.RoleAuditor}, role) {
		return fmt.Errorf("user add: -name is required and -role must be technician, engineer or auditor")
	}
	store, err := openStore(ctx, c, c.logger(io.Discard))
	if err != nil {
		return err
	}
	defer store.Close()
	token, err := db.NewToken()
	if err != nil {
		return err
	}
	if err := store.PutUser(ctx, db.User{Site: site, Name: name, Role: role}, token); err != nil {
		return err
	}
	fmt.Fprintf(stdout, "user %s (%s, site %s) token: %s\n", name, role, site, token)
	return nil
}
