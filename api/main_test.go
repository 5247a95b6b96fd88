package api_test

import (
	"fmt"
	"testing"

	"etchlog/db/dbtest"
	"etchlog/openapi/spectest"
)

func TestMain(m *testing.M) { dbtest.Main(counted{m}) }

// counted runs the tests, then says how many answers were checked against the spec.
type counted struct{ m *testing.M }

func (c counted) Run() int {
	code := c.m.Run()
	fmt.Printf("spectest: %d answers checked against openapi/openapi.yaml\n", spectest.Default.Checked())
	return code
}
