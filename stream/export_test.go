package stream

// LimitPagesForFuzzing lowers the Parquet page bounds to 8 MiB and 2^18 values for the fuzz
// tests and returns a function that restores them.
func LimitPagesForFuzzing() (restore func()) {
	b, v := minPageBound, maxPageValues
	minPageBound, maxPageValues = 8<<20, 1<<18
	return func() { minPageBound, maxPageValues = b, v }
}
