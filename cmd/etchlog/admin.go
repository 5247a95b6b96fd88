package main

import (
	"context"
	"flag"
	"fmt"
	"io"
	"slices"
	"strings"

	"etchlog/db"
)

// cmdMigrate applies (up) or rolls back (down) the embedded migrations as
// the owner role. Down refuses while records exist unless -destroy names the
// database.
func cmdMigrate(ctx context.Context, args []string, getenv func(string) string, stdout, stderr io.Writer) error {
	dir := "up"
	switch {
	case len(args) > 0 && (args[0] == "up" || args[0] == "down"):
		dir, args = args[0], args[1:]
	case len(args) > 0 && !strings.HasPrefix(args[len(args)-1], "-"):
		dir, args = args[len(args)-1], args[:len(args)-1]
	}
	var destroy string
	c, err := parse("migrate", args, getenv, stderr, func(fs *flag.FlagSet) {
		fs.StringVar(&destroy, "destroy", "", "with down: the name of the database whose records may be destroyed")
	})
	if err != nil {
		return err
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

// cmdUser creates or replaces an API user and prints the new token once.
func cmdUser(ctx context.Context, args []string, getenv func(string) string, stdout, stderr io.Writer) error {
	if len(args) == 0 || args[0] != "add" {
		return fmt.Errorf("user: want \"user add -name NAME -role technician|engineer|auditor [-site SITE]\"")
	}
	var name, role, site string
	c, err := parse("user add", args[1:], getenv, stderr, func(fs *flag.FlagSet) {
		fs.StringVar(&name, "name", "", "user name (required)")
		fs.StringVar(&role, "role", "", "technician, engineer or auditor (required)")
		fs.StringVar(&site, "site", "main", "site (tenant) the user belongs to")
	})
	if err != nil {
		return err
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
