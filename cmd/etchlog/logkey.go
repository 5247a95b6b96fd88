package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"log/slog"
	"os"
	"path/filepath"
	"strings"

	"etchlog/db"
	"etchlog/db/logfmt"
)

// errNoLogKey is why serve refuses to start without a signing key.
var errNoLogKey = errors.New("no log signing key: run \"etchlog keygen -out FILE\" once, keep FILE outside the database, " +
	"and give it with -log-key-file FILE or ETCHLOG_LOG_KEY_FILE (or the key text in ETCHLOG_LOG_KEY)")

// logKey returns the private log key from the environment or the key file.
func (c config) logKey() (string, error) {
	if c.LogKey != "" {
		return c.LogKey, nil
	}
	if c.LogKeyFile == "" {
		return "", errNoLogKey
	}
	b, err := os.ReadFile(c.LogKeyFile)
	if err != nil {
		return "", fmt.Errorf("log key: %w", err)
	}
	return strings.TrimSpace(string(b)), nil
}

// demoLogKey is the demo's own key: made once, kept in the user's cache
// directory, so the demo's checkpoints keep verifying across restarts.
func demoLogKey() (string, error) {
	dir, err := os.UserCacheDir()
	if err != nil {
		dir = os.TempDir()
	}
	path := filepath.Join(dir, "etchlog", "demo-log.key")
	if b, err := os.ReadFile(path); err == nil {
		return strings.TrimSpace(string(b)), nil
	}
	skey, _, err := logfmt.GenerateKey("etchlog-demo")
	if err != nil {
		return "", err
	}
	if err := os.MkdirAll(filepath.Dir(path), 0o700); err != nil {
		return "", err
	}
	return skey, os.WriteFile(path, []byte(skey+"\n"), 0o600)
}

// startLog gives the store its key and runs the log sequencer until ctx ends.
func startLog(ctx context.Context, store *db.Store, skey string, log *slog.Logger) error {
	if err := store.SetLogKey(skey); err != nil {
		return err
	}
	go store.RunSequencer(ctx, db.SequencerOptions{Logf: func(f string, a ...any) { //nolint:errcheck // ends with ctx
		log.Info(fmt.Sprintf(f, a...))
	}})
	return nil
}

// cmdKeygen makes a log signing key: the private key goes to -out (mode
// 0600), the public key to -out.pub and to stdout.
func cmdKeygen(_ context.Context, args []string, _ func(string) string, stdout, stderr io.Writer) error {
	fs := newFlagSet("keygen", "keygen [flags]", "Makes the Ed25519 key that signs the log's checkpoints: the private key to -out (mode\n"+
		"0600; keep it outside the database), the public key to the same name with .pub.")
	name := fs.String("name", "etchlog", "key name shown in checkpoint signature lines (letters, digits, . - _)")
	out := fs.String("out", "etchlog-log.key", "file for the private key; the public key goes to FILE.pub")
	if err := parseFlags(fs, args, stdout, stderr); err != nil {
		return err
	}
	if _, err := os.Stat(*out); err == nil {
		return fmt.Errorf("keygen: %s exists; a new key would orphan every checkpoint signed with it", *out)
	}
	skey, vkey, err := logfmt.GenerateKey(*name)
	if err != nil {
		return fmt.Errorf("keygen: %w", err)
	}
	if err := os.WriteFile(*out, []byte(skey+"\n"), 0o600); err != nil {
		return err
	}
	if err := os.WriteFile(*out+".pub", []byte(vkey+"\n"), 0o644); err != nil {
		return err
	}
	fmt.Fprintf(stdout, "private key: %s (keep it outside the database; give it to etchlog serve)\npublic key:  %s\n%s\n", *out, *out+".pub", vkey)
	return nil
}

// cmdVerify checks an export offline against signed checkpoints: no
// database, no server.
func cmdVerify(_ context.Context, args []string, _ func(string) string, stdout, stderr io.Writer) error {
	fs := newFlagSet("verify", "verify --export FILE --checkpoint FILE --key PUBKEY [--older-checkpoint FILE]",
		"Checks an export against signed checkpoints with no database and no server: every leaf\n"+
			"against its fact, the root against the checkpoint, the older checkpoint as a prefix.")
	export := fs.String("export", "", "the export file (GET /v1/export)")
	checkpoint := fs.String("checkpoint", "", "the checkpoint taken with the export (GET /v1/log/checkpoint)")
	key := fs.String("key", "", "the public key file, or the key text (name+hash+base64)")
	older := fs.String("older-checkpoint", "", "a checkpoint you kept from an earlier visit (optional)")
	if err := parseFlags(fs, args, stdout, stderr); err != nil {
		return err
	}
	if *export == "" || *checkpoint == "" || *key == "" {
		fs.Usage()
		return fmt.Errorf("verify: -export, -checkpoint and -key are required")
	}
	vkey := *key
	if b, err := os.ReadFile(*key); err == nil {
		vkey = strings.TrimSpace(string(b))
	}
	cp, err := os.ReadFile(*checkpoint)
	if err != nil {
		return err
	}
	var old []byte
	if *older != "" {
		if old, err = os.ReadFile(*older); err != nil {
			return err
		}
	}
	f, err := os.Open(*export)
	if err != nil {
		return err
	}
	defer f.Close()
	rep, err := logfmt.VerifyExport(f, vkey, cp, old)
	if err != nil {
		return fmt.Errorf("verify: %w", err)
	}
	fmt.Fprintf(stdout, "site %q: %d leaves read, root %x\n", rep.Site, rep.Leaves, rep.Root)
	fmt.Fprintf(stdout, "checkpoint: size %d, signature good\n", rep.CheckpointSize)
	if rep.OlderSize != nil {
		fmt.Fprintf(stdout, "older checkpoint: size %d, signature good\n", *rep.OlderSize)
	}
	for _, p := range rep.Problems {
		fmt.Fprintln(stdout, "PROBLEM:", p)
	}
	if rep.Dropped > 0 {
		fmt.Fprintf(stdout, "... and %d more problems\n", rep.Dropped)
	}
	if !rep.OK {
		return fmt.Errorf("verify: the export does not match the signed checkpoint(s)")
	}
	if rep.OlderSize != nil {
		fmt.Fprintf(stdout, "OK: every leaf matches its fact, the root matches the checkpoint, and the first %d leaves are the ones the older checkpoint signed: the log only grew.\n", *rep.OlderSize)
	} else {
		fmt.Fprintln(stdout, "OK: every leaf matches its fact and the root matches the checkpoint.")
	}
	return nil
}
