// Command etchlog runs the etchlog service: weld procedure qualification
// records in PostgreSQL, checked against published models.
//
//	etchlog serve            run the API server (production entry)
//	etchlog demo             load the demo shop and run the server
//	etchlog migrate up|down  apply or roll back the schema
//	etchlog user add         create an API user and print its token
//	etchlog load             measure a running server (loopback only)
//	etchlog keygen           make the log signing key
//	etchlog verify           check an export against signed checkpoints, offline
//	etchlog import coupons   check or import a CSV file of coupons with their sections
package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"os/signal"
	"syscall"
)

func main() {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer stop()
	if err := run(ctx, os.Args[1:], os.Getenv, os.Stdout, os.Stderr); err != nil {
		fmt.Fprintln(os.Stderr, "etchlog:", err)
		os.Exit(1)
	}
}

const usage = `usage: etchlog <command> [flags]

commands:
  serve            run the API server
  demo             load the invented demo shop into the local database and run the server
  migrate up|down  apply or roll back the database schema
  user add         create or replace an API user and print its token
  load             measure a running server against a no-database baseline (loopback only)
  keygen           make the log signing key (private key file and public key)
  verify           check an export against signed checkpoints, offline (no database, no server)
  import coupons   check (dry run) or import a CSV file of coupons with their sections into a running server

Run "etchlog <command> -h" for the flags of a command. Without DATABASE_URL,
etchlog uses the local PostgreSQL server, or starts a private one.`

// run is main without the process: a test can boot the whole server with it.
// A command asked for its help (-h) prints it on stdout and succeeds.
func run(ctx context.Context, args []string, getenv func(string) string, stdout, stderr io.Writer) error {
	if err := dispatch(ctx, args, getenv, stdout, stderr); !errors.Is(err, flag.ErrHelp) {
		return err
	}
	return nil
}

// dispatch runs the command args[0] with the rest of args.
func dispatch(ctx context.Context, args []string, getenv func(string) string, stdout, stderr io.Writer) error {
	if len(args) == 0 {
		fmt.Fprintln(stderr, usage)
		return fmt.Errorf("no command given")
	}
	switch args[0] {
	case "serve":
		return cmdServe(ctx, args[1:], getenv, stdout, stderr)
	case "demo":
		return cmdDemo(ctx, args[1:], getenv, stdout, stderr)
	case "migrate":
		return cmdMigrate(ctx, args[1:], getenv, stdout, stderr)
	case "user":
		return cmdUser(ctx, args[1:], getenv, stdout, stderr)
	case "load":
		return cmdLoad(ctx, args[1:], getenv, stdout, stderr)
	case "keygen":
		return cmdKeygen(ctx, args[1:], getenv, stdout, stderr)
	case "verify":
		return cmdVerify(ctx, args[1:], getenv, stdout, stderr)
	case "import":
		return cmdImport(ctx, args[1:], getenv, stdout, stderr)
	case "help", "-h", "--help":
		fmt.Fprintln(stdout, usage)
		return nil
	}
	fmt.Fprintln(stderr, usage)
	return fmt.Errorf("unknown command %q", args[0])
}
