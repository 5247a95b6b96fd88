package logfmt

import (
	"bytes"
	"encoding/base64"
	"fmt"
	"slices"

	"github.com/transparency-dev/merkle/compact"
	"github.com/transparency-dev/merkle/rfc6962"
)

// MaxProblems bounds the problems a verification lists; the rest are counted.
const MaxProblems = 200

// Verifier checks a log streamed leaf by leaf: each leaf's fact against its
// leaf hash, the leaf indexes, and the tree root at every size a signed
// checkpoint names. It keeps only a compact range (one hash per level), so
// memory grows with log2 of the log's size, not with its size.
type Verifier struct {
	vkey     string
	site     string
	rng      *compact.Range
	want     map[uint64][]byte // checkpoint size → signed root
	got      map[uint64][]byte // size → recomputed root
	Leaves   uint64
	Problems []string
	Dropped  int
}

var rangeFactory = &compact.RangeFactory{Hash: HashChildren}

// NewVerifier starts a verification of site's log against checkpoints signed
// by vkey.
func NewVerifier(site, vkey string) *Verifier {
	return &Verifier{vkey: vkey, site: site, rng: rangeFactory.NewEmptyRange(0),
		want: map[uint64][]byte{}, got: map[uint64][]byte{0: rfc6962.DefaultHasher.EmptyRoot()}}
}

// Problem records one finding.
func (v *Verifier) Problem(format string, a ...any) {
	if len(v.Problems) >= MaxProblems {
		v.Dropped++
		return
	}
	v.Problems = append(v.Problems, fmt.Sprintf(format, a...))
}

// Checkpoint adds a signed checkpoint whose root the log must reproduce. It
// must come before the leaves it covers. It returns the checkpoint's size.
func (v *Verifier) Checkpoint(note []byte, label string) (uint64, error) {
	site, cp, err := OpenCheckpoint(note, v.vkey)
	if err != nil {
		v.Problem("%s: %v", label, err)
		return 0, err
	}
	if site != v.site {
		v.Problem("%s: it is the checkpoint of site %q, the log is site %q's", label, site, v.site)
		return 0, fmt.Errorf("wrong site")
	}
	if cp.Size < v.Leaves {
		v.Problem("%s: size %d given after %d leaves were read", label, cp.Size, v.Leaves)
		return cp.Size, fmt.Errorf("late checkpoint")
	}
	if prev, ok := v.want[cp.Size]; ok && !bytes.Equal(prev, cp.Hash) {
		v.Problem("%s: two signed checkpoints of size %d name different roots: the log was forked", label, cp.Size)
	}
	v.want[cp.Size] = cp.Hash
	return cp.Size, nil
}

// Leaf checks one exported leaf and appends the hash of its fact as it
// stands now to the tree.
func (v *Verifier) Leaf(l ExportLeaf) {
	if l.Index != v.Leaves {
		v.Problem("leaf %d appears where leaf %d belongs: a leaf is missing or out of order", l.Index, v.Leaves)
	}
	h := l.LeafHash
	switch {
	case l.Fields == nil:
		v.Problem("leaf %d (%s %s revision %d): the fact is missing from the database (%s)", v.Leaves, l.Kind, l.RecordID, l.Revision, l.Missing)
	default:
		h = l.Fact().LeafHash()
		if !bytes.Equal(h, l.LeafHash) {
			v.Problem("leaf %d (%s %s revision %d): the stored fact does not match its leaf hash (altered after it was logged)", v.Leaves, l.Kind, l.RecordID, l.Revision)
		}
		if attr := l.listingMismatch(); attr != "" {
			v.Problem("leaf %d (%s %s revision %d): the log lists a %s the fact does not hold (the listing was edited)", v.Leaves, l.Kind, l.RecordID, l.Revision, attr)
		}
	}
	if len(h) != 32 {
		h = make([]byte, 32)
	}
	_ = v.rng.Append(h, nil) // appending to a range that starts at 0 cannot fail
	v.Leaves++
	if _, ok := v.want[v.Leaves]; ok {
		root, _ := v.rng.GetRootHash(nil)
		v.got[v.Leaves] = root
	}
}

// Unlogged records a stored fact that never entered the log.
func (v *Verifier) Unlogged(u Unlogged) {
	v.Problem("%s %s revision %d: stored but not in the log (%s)", u.Kind, u.RecordID, u.Revision, u.Why)
}

// Root returns the recomputed root of the whole log read so far.
func (v *Verifier) Root() []byte {
	root, _ := v.rng.GetRootHash(nil)
	if root == nil {
		return rfc6962.DefaultHasher.EmptyRoot()
	}
	return root
}

// Finish compares the recomputed roots with every signed checkpoint and
// reports whether no problem was found.
func (v *Verifier) Finish() bool {
	sizes := make([]uint64, 0, len(v.want))
	for size := range v.want {
		sizes = append(sizes, size)
	}
	slices.Sort(sizes)
	for _, size := range sizes {
		root := v.want[size]
		got, ok := v.got[size]
		switch {
		case size > v.Leaves:
			v.Problem("a signed checkpoint covers %d leaves but only %d are present: leaves were removed from the end", size, v.Leaves)
		case !ok:
			v.Problem("no root computed at size %d", size)
		case !bytes.Equal(got, root):
			v.Problem("the first %d leaves hash to root %s, the signed checkpoint says %s: logged facts were altered, removed or reordered",
				size, base64.StdEncoding.EncodeToString(got), base64.StdEncoding.EncodeToString(root))
		}
	}
	return len(v.Problems) == 0 && v.Dropped == 0
}
