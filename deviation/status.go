package deviation

// Status is what became of one input record in a check.
type Status uint8

const (
	// StatusUsed: the point lies on a patch and enters the statistics and
	// the verdict.
	StatusUsed Status = iota
	// StatusOutside: no patch contains the point's closest point; it lies
	// beyond the design's extent. Kept in the output, not in the verdict.
	StatusOutside
	// StatusFar: the point's |deviation| exceeds the tolerance's far_mm: it
	// is not on the shell (scaffold, people, props). Not in the verdict.
	StatusFar
	// StatusRejected: the input record could not be read (see its reason).
	StatusRejected
)

var statusNames = [...]string{"used", "outside", "far", "rejected"}

// String returns the status as written in deviations.csv.
func (s Status) String() string {
	if int(s) < len(statusNames) {
		return statusNames[s]
	}
	return "unknown"
}
