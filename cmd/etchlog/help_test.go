package main

import (
	"bytes"
	"context"
	"regexp"
	"slices"
	"strings"
	"testing"
)

// TestHelp asks every command for its help: run succeeds, the usage goes to
// stdout naming the command, and it lists exactly the command's own flags.
func TestHelp(t *testing.T) {
	t.Parallel()
	server := []string{"addr", "body-limit", "database-read-url", "database-url", "db-conns", "log-key-file", "log-level", "owner-database-url", "per-user", "read-max-lag"}
	flagLine := regexp.MustCompile(`(?m)^  -(\S+)`)
	for _, c := range []struct {
		args  []string
		usage string   // the synopsis line
		flags []string // sorted
	}{
		{[]string{"-h"}, "usage: etchlog <command> [flags]", nil},
		{[]string{"help"}, "usage: etchlog <command> [flags]", nil},
		{[]string{"serve", "-h"}, "usage: etchlog serve [flags]", server},
		{[]string{"demo", "-h"}, "usage: etchlog demo [flags]", server},
		{[]string{"demo", "--help"}, "usage: etchlog demo [flags]", server},
		{[]string{"migrate", "-h"}, "usage: etchlog migrate [up|down] [flags]", []string{"database-url", "destroy", "owner-database-url"}},
		{[]string{"user", "-h"}, "usage: etchlog user add", nil},
		{[]string{"user", "add", "-h"}, "usage: etchlog user add", []string{"database-url", "name", "owner-database-url", "role", "site"}},
		{[]string{"load", "-h"}, "usage: etchlog load [flags]", []string{"auditor-token", "c", "database-url", "duration", "exporters", "max-time", "mixed", "monitor-token", "n", "pagers", "producers", "token", "url", "writers"}},
		{[]string{"keygen", "-h"}, "usage: etchlog keygen [flags]", []string{"name", "out"}},
		{[]string{"import", "-h"}, "usage: etchlog import coupons [flags] FILE.csv", nil},
		{[]string{"import", "coupons", "-h"}, "usage: etchlog import coupons [flags] FILE.csv", []string{"commit", "part-size", "token", "url"}},
		{[]string{"verify", "-h"}, "usage: etchlog verify --export FILE", []string{"checkpoint", "export", "key", "older-checkpoint"}},
	} {
		t.Run(strings.Join(c.args, " "), func(t *testing.T) {
			var stdout, stderr bytes.Buffer
			if err := run(context.Background(), c.args, func(string) string { return "" }, &stdout, &stderr); err != nil {
				t.Fatalf("run = %v, want nil (exit 0)\nstderr:\n%s", err, &stderr)
			}
			out := stdout.String()
			if !strings.HasPrefix(out, c.usage) {
				t.Errorf("stdout starts %.60q, want %q", out, c.usage)
			}
			if stderr.Len() > 0 {
				t.Errorf("stderr = %q, want nothing (help goes to stdout)", &stderr)
			}
			var got []string
			for _, m := range flagLine.FindAllStringSubmatch(out, -1) {
				got = append(got, m[1])
			}
			if !slices.Equal(got, c.flags) {
				t.Errorf("flags listed %q, want %q\n%s", got, c.flags, out)
			}
		})
	}
}

// TestBadFlag: an unknown flag fails with the command's usage on stderr.
func TestBadFlag(t *testing.T) {
	t.Parallel()
	for _, args := range [][]string{{"demo", "-nope"}, {"user", "add", "-addr", "x"}, {"migrate", "-addr", "x"}, {"migrate", "sideways"}} {
		var stdout, stderr bytes.Buffer
		err := run(context.Background(), args, func(string) string { return "" }, &stdout, &stderr)
		if err == nil {
			t.Errorf("run %q = nil, want an error", args)
		}
		if stdout.Len() > 0 {
			t.Errorf("run %q wrote %q on stdout, want nothing", args, &stdout)
		}
	}
}
