package api

// SetCSVPageSize sets how many rows a CSV answer reads from the store per
// page, so a test crosses page boundaries with a few records; it returns
// the function that restores the size.
func SetCSVPageSize(n int) (restore func()) {
	old := csvPageSize.Swap(int64(n))
	return func() { csvPageSize.Store(old) }
}
