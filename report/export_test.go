package report

// Unexported helpers the external tests (report_test) check.
var (
	ModelOf  = modelOf
	SafeCell = safeCell
)
