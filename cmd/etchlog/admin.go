package main

import (
	"context"
	"fmt"
	"io"
	"slices"

	"etchlog/db"
)

// cmdMigrate applies (up) or rolls back (down) the embedded migrations as
// the owner role. Down refuses while records exist unless -destroy names the
// database.
func cmdMigrate(ctx context.Context, args []string, getenv func(string) string, stdout, stderr io.Writer) error {
	dir := ""
	if len(args) > 0 && (args[0] == "up" || args[0] == "down") {
		dir, args = args[0], args[1:] // "migrate down -destroy NAME" reads naturally
	}
	var destroy string
	c := defaults(getenv)
	fs := newFlagSet("migrate", "migrate [up|down] [flags]",
		"Applies (up, the default) or rolls back (down) every embedded database migration as the\n"+
			"owner role. Down refuses while records exist unless -destroy names the database.")
	fs.StringVar(&destroy, "destroy", "", "with down: the name of the database whose records may be destroyed")
	c.databaseFlags(fs)
	if err := parseFlags(fs, args, stdout, stderr); err != nil {
		return err
	}
	switch {
	case fs.NArg() == 0:
	case fs.NArg() == 1 && dir == "":
		dir = fs.Arg(0)
	default:
		return fmt.Errorf("migrate: want one direction, up or down, got %q", fs.Args())
	}
	if dir == "" {
		dir = "up"
	}
	if dir != "up" && dir != "down" {
		return fmt.Errorf("migrate: want up or down, got %q", dir)
	}
	dbs, err := c.resolve(ctx, c.logger(io.Discard))
	if err != nil {
		return err
	}
	if dbs.owner == "" {
		return fmt.Errorf("migrate: needs the administrator's login: set -owner-database-url (env ETCHLOG_OWNER_DATABASE_URL)")
	}
	if dir == "up" {
		err = db.Setup(ctx, dbs.owner)
	} else {
		err = db.MigrateDown(dbs.owner, destroy)
	}
	if err != nil {
		return err
	}
	fmt.Fprintf(stdout, "migrate %s: done (%s)\n", dir, redact(dbs.owner))
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
	c.databaseFlags(fs)
	if err := parseFlags(fs, args[1:], stdout, stderr); err != nil {
		return err
	}
	if fs.NArg() > 0 {
		return fmt.Errorf("user add: unexpected argument %q", fs.Arg(0))
	}
	if name == "" || !slices.Contains([]string{db.RoleTechnician, db.RoleEngineer, db.RoleAuditor}, role) {
		return fmt.Errorf("user add: -name is required and -role must be technician, engineer or auditor")
	}
	skey, err := c.logKey() // a user change is a fact of the site's log
	if err != nil {
		return err
	}
	store, err := openOwner(ctx, c, c.logger(io.Discard))
	if err != nil {
		return err
	}
	defer store.Close()
	if err := store.SetLogKey(skey); err != nil {
		return err
	}
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
