package main

import (
	"context"
	"flag"
	"fmt"
	"io"
	"slices"

	"etchlog/cmd/etchlog/localpg"
	"etchlog/db"
)

// cmdMigrate applies (up) or rolls back (down) the embedded migrations.
func cmdMigrate(ctx context.Context, args []string, getenv func(string) string, stdout, stderr io.Writer) error {
	c, err := parse("migrate", args, getenv, stderr, nil)
	if err != nil {
		return err
	}
	rest := []string{"up"}
	if len(args) > 0 && !slices.Contains([]string{"-h", "--help"}, args[len(args)-1]) {
		rest = args[len(args)-1:]
	}
	dir := rest[0]
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
