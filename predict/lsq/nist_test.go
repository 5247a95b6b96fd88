package lsq

import (
	"bufio"
	"fmt"
	"math"
	"math/big"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// nistCase is one NIST StRD linear least-squares dataset with its
// certified values and the polynomial degree of its model (0: the
// predictors are used as they are, with an intercept).
type nistCase struct {
	name      string
	degree    int
	beta, sd  []float64
	resSD, r2 float64
	x         [][]float64 // predictor rows, as read
	y         []float64
}

// loadNIST reads testdata/nist-strd/<name>.dat: certified values from the
// header, data from line 61 on (CRLF line endings).
func loadNIST(tb testing.TB, name string) *nistCase {
	tb.Helper()
	fh, err := os.Open(filepath.Join("..", "..", "testdata", "nist-strd", name+".dat"))
	if err != nil {
		tb.Fatalf("open %s: %v", name, err)
	}
	tb.Cleanup(func() { fh.Close() })
	c := &nistCase{name: name}
	sc := bufio.NewScanner(fh)
	for line := 1; sc.Scan(); line++ {
		fields := strings.Fields(strings.TrimRight(sc.Text(), "\r"))
		switch {
		case line < 61 && len(fields) == 3 && strings.HasPrefix(fields[0], "B"):
			c.beta = append(c.beta, nistFloat(tb, fields[1]))
			c.sd = append(c.sd, nistFloat(tb, fields[2]))
		case line < 61 && len(fields) == 3 && fields[0] == "Standard" && fields[1] == "Deviation":
			c.resSD = nistFloat(tb, fields[2])
		case line < 61 && len(fields) == 2 && fields[0] == "R-Squared":
			c.r2 = nistFloat(tb, fields[1])
		case line >= 61 && len(fields) > 0:
			row := make([]float64, len(fields))
			for i, f := range fields {
				row[i] = nistFloat(tb, f)
			}
			c.y = append(c.y, row[0])
			c.x = append(c.x, row[1:])
		}
	}
	if err := sc.Err(); err != nil {
		tb.Fatalf("read %s: %v", name, err)
	}
	return c
}

func nistFloat(tb testing.TB, s string) float64 {
	tb.Helper()
	v, err := strconv.ParseFloat(s, 64)
	if err != nil {
		tb.Fatalf("parse %q: %v", s, err)
	}
	return v
}

// design builds X: an intercept column, then either the predictors or the
// powers x¹…x^degree. Powers are formed exactly in big.Float; hi is each
// power rounded to float64 and lo the rounded remainder, so hi + lo is the
// double-length design (lo is zero for the non-polynomial datasets).
func (c *nistCase) design() (hi, lo *mat.Dense) {
	p := len(c.beta)
	hi = mat.NewDense(len(c.y), p, nil)
	lo = mat.NewDense(len(c.y), p, nil)
	for i, row := range c.x {
		hi.Set(i, 0, 1)
		if c.degree == 0 {
			for j, v := range row {
				hi.Set(i, j+1, v)
			}
			continue
		}
		pow := new(big.Float).SetPrec(2048).SetFloat64(1)
		xv := new(big.Float).SetPrec(2048).SetFloat64(row[0])
		rest := new(big.Float).SetPrec(2048)
		for k := 1; k <= c.degree; k++ {
			pow.Mul(pow, xv)
			h, _ := pow.Float64()
			l, _ := rest.Sub(pow, new(big.Float).SetFloat64(h)).Float64()
			hi.Set(i, k, h)
			lo.Set(i, k, l)
		}
	}
	return hi, lo
}

// lre is the log relative error, the number of correct significant digits
// of est against cert, capped at 15; for cert = 0 the absolute error is used.
func lre(est, cert float64) float64 {
	var e float64
	if cert == 0 {
		e = math.Abs(est)
	} else {
		e = math.Abs(est-cert) / math.Abs(cert)
	}
	if e == 0 {
		return 15
	}
	return math.Max(0, math.Min(15, -math.Log10(e)))
}

// digitCheck is one estimated value against its certified value.
type digitCheck struct {
	label     string
	est, cert float64
	need      float64
}

func (d digitCheck) String() string {
	return fmt.Sprintf("%s = %.15g, want %.15g (%.1f digits, need %g)", d.label, d.est, d.cert, lre(d.est, d.cert), d.need)
}
