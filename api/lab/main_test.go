package lab_test

import (
	"testing"

	"etchlog/db/dbtest"
)

func TestMain(m *testing.M) { dbtest.Main(m) }
