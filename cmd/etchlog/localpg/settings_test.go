package localpg

import (
	"slices"
	"testing"
)

// TestParsePidFile checks decoding of the server's postmaster.pid.
func TestParsePidFile(t *testing.T) {
	tests := []struct {
		name    string
		in      string
		want    pidFile
		wantErr bool
	}{
		// Copied from a PostgreSQL 15.20 server started with a socket and TCP.
		{"SocketAndTCP", "12549\n/tmp/pfx/d\n1796177994\n5499\n/tmp/pfx\n127.0.0.1\n  9983253        15\nready   \n",
			pidFile{pid: 12549, port: 5499, socketDir: "/tmp/pfx", listenAddr: "127.0.0.1"}, false},
		{"SocketOnly", "77\n/d\n1796177994\n5432\n/d\n\n  1 2\nready   \n",
			pidFile{pid: 77, port: 5432, socketDir: "/d"}, false},
		{"Wildcard", "77\n/d\n1796177994\n5432\n\n*\n",
			pidFile{pid: 77, port: 5432, listenAddr: "127.0.0.1"}, false},
		// A server writes the first lines before it knows its port.
		{"ErrStarting", "77\n/d\n", pidFile{}, true},
		{"ErrPortOutOfRange", "77\n/d\n1\n70000\n", pidFile{}, true},
		{"ErrEmpty", "", pidFile{}, true},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			got, err := parsePidFile(tt.in)
			if (err != nil) != tt.wantErr {
				t.Fatalf("parsePidFile(%q) error = %v, want error %t", tt.in, err, tt.wantErr)
			}
			if got != tt.want {
				t.Errorf("parsePidFile(%q) = %+v, want %+v", tt.in, got, tt.want)
			}
		})
	}
}

// TestParseMajor checks the major version spelled as in PG_VERSION.
func TestParseMajor(t *testing.T) {
	tests := []struct {
		name, in, want string
		wantErr        bool
	}{
		{"Debian", "pg_ctl (PostgreSQL) 15.20 (Debian 15.20-0+deb12u1)\n", "15", false},
		{"Plain", "pg_ctl (PostgreSQL) 17.2", "17", false},
		{"Beta", "pg_ctl (PostgreSQL) 18beta1", "18", false},
		// Before release 10 the major version had two numbers.
		{"Old", "pg_ctl (PostgreSQL) 9.6.24", "9.6", false},
		{"ErrOther", "pg_ctl version unknown", "", true},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			got, err := parseMajor(tt.in)
			if got != tt.want || (err != nil) != tt.wantErr {
				t.Errorf("parseMajor(%q) = %q, %v; want %q, error %t", tt.in, got, err, tt.want, tt.wantErr)
			}
		})
	}
}

// TestSortNewestFirst checks numeric, not lexical, ordering of versions.
func TestSortNewestFirst(t *testing.T) {
	in := []string{"/usr/lib/postgresql/9.6/bin", "/usr/lib/postgresql/16/bin", "/usr/lib/postgresql/10/bin", "/usr/pgsql-13/bin"}
	want := []string{"/usr/lib/postgresql/16/bin", "/usr/pgsql-13/bin", "/usr/lib/postgresql/10/bin", "/usr/lib/postgresql/9.6/bin"}
	sortNewestFirst(in)
	if !slices.Equal(in, want) {
		t.Errorf("sortNewestFirst = %v, want %v", in, want)
	}
}

// TestConfQuote checks postgresql.conf string quoting.
func TestConfQuote(t *testing.T) {
	tests := []struct{ name, in, want string }{
		{"Empty", "", "''"},
		{"Path", "/var/lib/etchlog/pgdata", "'/var/lib/etchlog/pgdata'"},
		{"Quote", "/home/o'neil", "'/home/o''neil'"},
		{"Backslash", `C:\x`, `'C:\\x'`},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if got := confQuote(tt.in); got != tt.want {
				t.Errorf("confQuote(%q) = %s, want %s", tt.in, got, tt.want)
			}
		})
	}
}
