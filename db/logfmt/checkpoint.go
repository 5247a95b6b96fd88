package logfmt

import (
	"crypto/ed25519"
	"crypto/hmac"
	"crypto/rand"
	"crypto/sha256"
	"encoding/base64"
	"fmt"
	"hash"
	"strings"
	"sync"

	"github.com/transparency-dev/formats/log"
	"golang.org/x/mod/sumdb/note"
)

// OriginPrefix starts the origin line of every etchlog checkpoint; the site
// follows it, so a checkpoint of one site never verifies another's log.
const OriginPrefix = "etchlog/"

// Origin is the checkpoint origin line of a site's log.
func Origin(site string) string { return OriginPrefix + site }

// GenerateKey makes a new Ed25519 signing key in the signed-note text form:
// skey ("PRIVATE+KEY+name+hash+data") stays with the service, outside the
// database; vkey ("name+hash+data") is given to auditors.
func GenerateKey(name string) (skey, vkey string, err error) {
	return note.GenerateKey(rand.Reader, name)
}

// Signer signs checkpoints and authenticates pending leaves with one key.
type Signer struct {
	note.Signer
	mac  []byte
	vk   string
	macs sync.Pool // keyed HMAC-SHA-256 states, reset and reused by Tag
}

// NewSigner parses a private key made by GenerateKey.
func NewSigner(skey string) (*Signer, error) {
	skey = strings.TrimSpace(skey)
	s, err := note.NewSigner(skey)
	if err != nil {
		return nil, fmt.Errorf("log key: %w", err)
	}
	vk, err := verifierKeyOf(skey)
	if err != nil {
		return nil, err
	}
	// A separate key for pending-leaf tags, derived so that one secret is kept.
	m := sha256.Sum256([]byte("etchlog pending leaf tag\x00" + skey))
	return &Signer{Signer: s, mac: m[:], vk: vk}, nil
}

// VerifierKey is the public key (vkey text) matching the signer.
func (s *Signer) VerifierKey() string { return s.vk }

// Tag authenticates a pending leaf: HMAC-SHA-256 over the site and leaf hash.
// Only a holder of the private key can make a tag the sequencer accepts, so
// a row and leaf inserted behind the service's back never enter the log.
func (s *Signer) Tag(site string, leafHash []byte) []byte {
	return s.tagOf(site, "\x00", leafHash)
}

// tagOf is HMAC-SHA-256 with the tag key over site || marker || data, from a
// keyed state reset and reused (macs) rather than keyed anew for each tag.
func (s *Signer) tagOf(site, marker string, data []byte) []byte {
	h, ok := s.macs.Get().(hash.Hash)
	if ok {
		h.Reset() // back to the keyed state
	} else {
		h = hmac.New(sha256.New, s.mac)
	}
	h.Write([]byte(site))
	h.Write([]byte(marker))
	h.Write(data)
	tag := h.Sum(make([]byte, 0, sha256.Size))
	s.macs.Put(h)
	return tag
}

// TagOK reports whether tag is the signer's tag of the leaf.
func (s *Signer) TagOK(site string, leafHash, tag []byte) bool {
	return hmac.Equal(tag, s.Tag(site, leafHash))
}

// TagMany authenticates a pending entry that names many leaves at once by
// its digest: HMAC-SHA-256 over the site, a marker and the digest, so that
// no such tag is ever the tag of a single leaf hash (Tag's input after the
// site is the 32-byte hash alone).
func (s *Signer) TagMany(site string, digest []byte) []byte {
	return s.tagOf(site, "\x00many\x00", digest)
}

// TagManyOK reports whether tag is the signer's tag of a pending entry's digest.
func (s *Signer) TagManyOK(site string, digest, tag []byte) bool {
	return hmac.Equal(tag, s.TagMany(site, digest))
}

// verifierKeyOf derives "name+hash+data" from "PRIVATE+KEY+name+hash+data":
// the data is an algorithm byte (1: Ed25519) and the 32-byte seed.
func verifierKeyOf(skey string) (string, error) {
	parts := strings.SplitN(skey, "+", 5)
	if len(parts) != 5 || parts[0] != "PRIVATE" || parts[1] != "KEY" {
		return "", fmt.Errorf("log key: not a private key made by etchlog keygen")
	}
	raw, err := base64.StdEncoding.DecodeString(parts[4])
	if err != nil || len(raw) != 1+ed25519.SeedSize || raw[0] != 1 {
		return "", fmt.Errorf("log key: not an Ed25519 key made by etchlog keygen")
	}
	pub := ed25519.NewKeyFromSeed(raw[1:]).Public().(ed25519.PublicKey)
	return note.NewEd25519VerifierKey(parts[2], pub)
}

// SignCheckpoint signs the log's size and root hash as a signed note.
func SignCheckpoint(s note.Signer, site string, size uint64, root []byte) (string, error) {
	cp := log.Checkpoint{Origin: Origin(site), Size: size, Hash: root}
	b, err := note.Sign(&note.Note{Text: string(cp.Marshal())}, s)
	if err != nil {
		return "", fmt.Errorf("sign checkpoint: %w", err)
	}
	return string(b), nil
}

// OpenCheckpoint checks a signed checkpoint against the public key and
// returns its site, size and root hash.
func OpenCheckpoint(text []byte, vkey string) (site string, cp log.Checkpoint, err error) {
	v, err := note.NewVerifier(strings.TrimSpace(vkey))
	if err != nil {
		return "", cp, fmt.Errorf("public key: %w", err)
	}
	n, err := note.Open(text, note.VerifierList(v))
	if err != nil {
		return "", cp, fmt.Errorf("checkpoint signature: %w", err)
	}
	if _, err := cp.Unmarshal([]byte(n.Text)); err != nil {
		return "", cp, fmt.Errorf("checkpoint: %w", err)
	}
	if !strings.HasPrefix(cp.Origin, OriginPrefix) {
		return "", cp, fmt.Errorf("checkpoint origin %q is not an etchlog site log", cp.Origin)
	}
	return strings.TrimPrefix(cp.Origin, OriginPrefix), cp, nil
}
