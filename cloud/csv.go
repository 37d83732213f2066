package cloud

import (
	"bufio"
	"bytes"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"math"
	"math/bits"
	"os"
	"runtime"
	"strconv"
	"strings"
	"sync"
	"unicode/utf8"

	"gonum.org/v1/gonum/spatial/r3"
)

// Limits of the delimited-text reader.
const (
	// maxLine bounds one physical line; a longer one is an error (a
	// survey row is well under 1 KiB).
	maxLine = 1 << 20
	// sampleLines is how many data lines decide delimiter and header.
	sampleLines = 20
)

// Column roles of a delimited file.
const (
	roleID   = "id"
	roleE    = "e"
	roleN    = "n"
	roleZ    = "z"
	roleCode = "code"
	roleStn  = "station"
	roleSkip = "-"
)

// columnRole maps a header or --columns name to its role ("id", "e", "n",
// "z", "code"), or "" for any other name. Matching is case-insensitive and
// ignores a trailing unit such as "Easting (m)" or "Z [ft]". The spellings
// are those of common survey exports (common practice); x is taken as the
// easting and y as the northing, as in the XYZ convention.
func columnRole(name string) string {
	n, _ := headerName(name)
	switch n {
	case "point", "pt", "id", "name", "pointid", "point_id", "point id", "pt_id", "ptid", "point_name", "pointname":
		return roleID
	case "e", "east", "easting", "x":
		return roleE
	case "n", "north", "northing", "y":
		return roleN
	case "z", "h", "elev", "elevation", "height", "rl":
		return roleZ
	case "code", "desc", "description", "remark", "remarks", "descr":
		return roleCode
	case "station", "stn", "setup", "station_id", "stationid", "sta":
		return roleStn
	case "-", "_", "skip":
		return roleSkip
	}
	return ""
}

// headerName splits a column name such as "Easting (m)" into its
// lower-case base name and unit text: "easting", "m".
func headerName(name string) (base, unit string) {
	base = strings.ToLower(strings.TrimSpace(name))
	if i := strings.IndexAny(base, "(["); i > 0 {
		base, unit = strings.TrimSpace(base[:i]), strings.Trim(base[i:], "()[] ")
	}
	return base, unit
}

// span is the byte range [a, b) of one field within a line.
type span struct{ a, b int }

// csvReader reads delimited text: total-station shot files, XYZ exports.
type csvReader struct {
	path  string
	close func() error
	br    *bufio.Reader
	unit  Unit

	delim    byte // field separator; 0 means runs of blanks
	decComma bool // a ',' inside a number is its decimal mark

	ncols                            int
	idCol, eCol, nCol, zCol, codeCol int // -1 when absent
	stnCol                           int // -1 when absent
	attrCols                         []int
	attrNames                        []string

	pending []sampled // data lines read while sniffing, not yet returned
	lineNo  int64     // physical lines read so far
	buf     []byte    // current line
	fields  []span
	scratch *csvScratch // buffers: the bufio reader, lines, parsers, ids

	rows, rejected int64
	firstBad       int64
	firstReason    string
	ids            idSet
	dups           int64
	dupID          string
	dupLine        int64
	dupFirst       int64

	info Info
	err  error // sticky fatal error, or io.EOF once done
}

// csvScratch holds the buffers of a delimited-text reader, reused through
// scratchPool by the next reader once one is closed: reading many small
// shot files then allocates little beyond the records' strings.
type csvScratch struct {
	br      *bufio.Reader
	block   []byte    // the current chunk's data lines
	lines   []lineRef // where each of them lies in block
	parsers [2]rowParser
	ids     idSet
}

// lineRef is one data line of a chunk: block[a:b], physical line no.
type lineRef struct {
	a, b int
	no   int64
}

// rowParser turns lines into records. A chunk's lines are shared among
// up to two of them running at once, each on its own range of records.
type rowParser struct {
	fields      []span
	arena       []byte // id and code bytes of its records
	ends        []int  // per record: end of its id, of its code and of its station in arena
	rejected    int64
	firstBad    int64
	firstReason string
}

// Parallel parsing: a chunk of at least parallelRows lines is parsed in two
// halves at once (when GOMAXPROCS > 1); maxBlock bounds the bytes of one
// chunk's lines, so a chunk may hold fewer records than asked for.
const (
	parallelRows = 4096
	maxBlock     = 16 << 20
)

// maxPooledIDs bounds the id table kept for reuse (2^17 slots, 2 MiB).
const maxPooledIDs = 1 << 17

var scratchPool = sync.Pool{New: func() any {
	return &csvScratch{br: bufio.NewReaderSize(nil, 1<<16)}
}}

// sampled is one data line kept from sniffing.
type sampled struct {
	line int64
	text []byte
}

// OpenCSV opens a delimited text file (comma, semicolon, tab or blank
// separated; see the package documentation) at path.
func OpenCSV(path string, opt Options) (Reader, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	r, err := newCSV(f, path, opt)
	if err != nil {
		f.Close()
		return nil, err
	}
	r.close = f.Close
	return r, nil
}

// newCSV reads the first lines of src to settle delimiter, header and
// columns. path only names the file in errors.
func newCSV(src io.Reader, path string, opt Options) (*csvReader, error) {
	sc := scratchPool.Get().(*csvScratch)
	sc.br.Reset(src)
	sc.ids.clear()
	r := &csvReader{
		path:    path,
		br:      sc.br,
		ids:     sc.ids,
		scratch: sc,
		unit:    opt.Unit,
	}
	if r.unit.Metres == 0 {
		r.unit = Metre
	}
	r.info = Info{Path: path, Format: "csv", Count: -1, Unit: r.unit}
	for len(r.pending) < sampleLines {
		line, err := r.dataLine()
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, err
		}
		r.pending = append(r.pending, sampled{r.lineNo, bytes.Clone(line)})
	}
	for _, s := range r.pending {
		if !utf8.Valid(s.text) {
			r.info.Warnings = append(r.info.Warnings, fmt.Sprintf("line %d is not UTF-8 (a legacy code page such as Latin-1?): ids and codes are kept byte for byte; export as UTF-8 for reports", s.line))
			break
		}
	}
	if len(r.pending) == 0 {
		return nil, &ParseError{Path: path, Line: int(max(1, r.lineNo)), Err: errors.New("no data lines (the file is empty or only comments)")}
	}
	lines := make([][]byte, len(r.pending))
	for i, s := range r.pending {
		lines[i] = s.text
	}
	r.delim = detectDelim(lines)
	r.decComma = r.delim == ';' || r.delim == '\t'
	r.info.Facts = append(r.info.Facts, Fact{"delimiter", delimName(r.delim)})
	if r.decComma {
		r.info.Facts = append(r.info.Facts, Fact{"decimals", "point or comma"})
	}

	first, firstNo := r.pending[0].text, r.pending[0].line // header or data
	names := r.splitStrings(first)
	isHeader := true
	for _, s := range names {
		if _, ok := r.parseNum([]byte(s)); ok {
			isHeader = false
			break
		}
	}
	var err error
	switch {
	case opt.Columns != nil:
		if isHeader {
			r.pending = r.pending[1:]
			r.info.Warnings = append(r.info.Warnings, fmt.Sprintf("line %d looks like a header (%s); it was skipped and --columns used instead", firstNo, strings.Join(names, ",")))
		}
		err = r.setColumns(opt.Columns, false, 0)
	case isHeader:
		r.pending = r.pending[1:]
		r.info.Facts = append(r.info.Facts, Fact{"header", "line " + strconv.FormatInt(firstNo, 10)})
		err = r.setColumns(names, true, int(firstNo))
	default:
		err = r.guessXYZ()
	}
	if err != nil {
		return nil, err
	}
	return r, nil
}

// setColumns assigns roles to the columns named by names (a header when
// fromHeader, else --columns).
func (r *csvReader) setColumns(names []string, fromHeader bool, line int) error {
	r.ncols = len(names)
	r.idCol, r.eCol, r.nCol, r.zCol, r.codeCol, r.stnCol = -1, -1, -1, -1, -1, -1
	slot := map[string]*int{roleID: &r.idCol, roleE: &r.eCol, roleN: &r.nCol, roleZ: &r.zCol, roleCode: &r.codeCol, roleStn: &r.stnCol}
	cols := make([]string, len(names))
	var saidXY bool
	unitClash := ""
	for i, name := range names {
		role := columnRole(name)
		key := strings.TrimSpace(name)
		if key == "" {
			if !fromHeader {
				return &ParseError{Path: r.path, Column: i + 1, Err: fmt.Errorf("%w: --columns has an empty name at position %d", ErrMissingColumn, i+1)}
			}
			key = "col" + strconv.Itoa(i+1)
		}
		if p := slot[role]; p != nil {
			if *p >= 0 {
				if !fromHeader {
					return &ParseError{Path: r.path, Column: i + 1, Field: role, Err: fmt.Errorf("%w: --columns names %s twice", ErrFieldCount, role)}
				}
				r.info.Warnings = append(r.info.Warnings, fmt.Sprintf("header column %d %q repeats column %s; kept as attribute %q", i+1, key, role, strings.ToLower(key)))
				role = ""
			} else {
				*p = i
				cols[i] = role
				base, unit := headerName(key)
				saidXY = saidXY || fromHeader && (base == "x" || base == "y")
				if u, err := ParseUnit(unit); fromHeader && unit != "" && err == nil && u.Metres != r.unit.Metres && unitClash == "" && (role == roleE || role == roleN || role == roleZ) {
					unitClash = fmt.Sprintf("the header gives %q in %s but the unit in use is %s: pass --units %s if the header is right", key, u.Name, r.unit.Name, u.Name)
				}
				continue
			}
		}
		if role == roleSkip {
			cols[i] = roleSkip
			continue
		}
		r.attrCols = append(r.attrCols, i)
		r.attrNames = append(r.attrNames, strings.ToLower(key))
		cols[i] = strings.ToLower(key)
	}
	r.info.Columns = cols
	var missing []string
	for _, role := range []string{roleE, roleN, roleZ} {
		if *slot[role] < 0 {
			missing = append(missing, role)
		}
	}
	if len(missing) > 0 {
		src := "--columns"
		if fromHeader {
			src = "the header"
		}
		return &ParseError{Path: r.path, Line: line, Field: strings.Join(missing, ","),
			Err: fmt.Errorf("%w: %s names no %s column (found %s; accepted spellings: e/east/easting/x, n/north/northing/y, z/h/elev/elevation/height/rl)",
				ErrMissingColumn, src, strings.Join(missing, ", "), strings.Join(names, ","))}
	}
	if saidXY {
		r.info.Warnings = append(r.info.Warnings, "the header names x/y columns: assumed x = easting, y = northing (some systems call the north axis x; if this file does, pass --columns)")
	}
	if unitClash != "" {
		r.info.Warnings = append(r.info.Warnings, unitClash)
	}
	return nil
}

// guessXYZ handles a headerless file without --columns: only plain XYZ
// (three numeric columns, optionally followed by numeric attributes, with
// a column 1 that is not all whole numbers) is accepted, because the order
// of id, northing and easting in a total-station file cannot be guessed
// safely.
func (r *csvReader) guessXYZ() error {
	first := r.pending[0]
	ask := func(why string) error {
		return &ParseError{Path: r.path, Line: int(first.line),
			Err: fmt.Errorf("%w: no header line and no --columns, and %s; pass --columns with the file's order, e.g. --columns id,n,e,z,code or --columns id,e,n,z,code", ErrMissingColumn, why)}
	}
	ncols := -1
	idLike := true // column 1 holds whole numbers only
	for _, s := range r.pending {
		r.buf = append(r.buf[:0], s.text...)
		r.fields = split(r.fields, r.buf, r.delim)
		if ncols < 0 {
			ncols = len(r.fields)
		}
		if len(r.fields) != ncols || ncols < 3 {
			return ask("the rows are not plain x,y,z")
		}
		line := r.buf
		for j, f := range r.fields {
			v, ok := r.parseNum(line[f.a:f.b])
			if !ok {
				return ask("column " + strconv.Itoa(j+1) + " is not numeric, so the file is not plain x,y,z")
			}
			if j == 0 && v != math.Trunc(v) {
				idLike = false
			}
		}
	}
	if ncols > 3 && idLike {
		// A numbered shot file (id, then three coordinates in an unknown
		// order) must not be read as x, y, z plus an attribute.
		return ask("column 1 holds whole numbers only, which look like point ids")
	}
	names := []string{"x", "y", "z"}
	for j := 4; j <= ncols; j++ {
		names = append(names, "col"+strconv.Itoa(j))
	}
	r.info.Warnings = append(r.info.Warnings, "no header line: read as plain XYZ (x = easting, y = northing, z = height)")
	return r.setColumns(names, false, 0)
}

// detectDelim picks the separator present in every sampled line, outside
// quotes, preferring tab, then semicolon, then comma; else runs of blanks.
func detectDelim(lines [][]byte) byte {
	for _, d := range []byte{'\t', ';', ','} {
		all := true
		for _, l := range lines {
			if !hasUnquoted(l, d) {
				all = false
				break
			}
		}
		if all {
			return d
		}
	}
	return 0
}

func hasUnquoted(line []byte, d byte) bool {
	quoted := false
	for _, c := range line {
		switch {
		case c == '"':
			quoted = !quoted
		case c == d && !quoted:
			return true
		}
	}
	return false
}

func delimName(d byte) string {
	switch d {
	case '\t':
		return "tab"
	case ';':
		return "semicolon"
	case ',':
		return "comma"
	}
	return "blanks"
}

// split cuts line into fields at delim (0: runs of blanks), trimming blanks
// around each field. A field in double quotes may hold the delimiter; its
// quotes are removed in place and "" inside it becomes ". It returns dst
// refilled.
func split(dst []span, line []byte, delim byte) []span {
	var out []span
	ok := false
	if delim != 0 {
		out, ok = splitWords(dst[:0], line, delim)
	} else {
		out, ok = splitBlankWords(dst[:0], line)
	}
	if ok {
		return out
	}
	return splitBytes(dst[:0], line, delim)
}

// splitBlankWords is split for runs of blanks on a line without quotes,
// eight bytes at a time: a field is a run of bytes between blanks. It
// reports false, having done nothing useful, when the line holds a double
// quote.
func splitBlankWords(dst []span, line []byte) ([]span, bool) {
	sm, tm, qm := swarLow*uint64(' '), swarLow*uint64('\t'), swarLow*uint64('"')
	start, i := 0, 0
	cut := func(k int) {
		if k > start {
			dst = append(dst, span{start, k})
		}
		start = k + 1
	}
	for ; i+8 <= len(line); i += 8 {
		w := binary.LittleEndian.Uint64(line[i:])
		if zeroBytes(w^qm) != 0 {
			return dst, false
		}
		for m := zeroBytes(w^sm) | zeroBytes(w^tm); m != 0; m &= m - 1 {
			cut(i + bits.TrailingZeros64(m)>>3)
		}
	}
	for ; i < len(line); i++ {
		switch line[i] {
		case '"':
			return dst, false
		case ' ', '\t':
			cut(i)
		}
	}
	cut(len(line))
	return dst, true
}

// SWAR ("SIMD within a register") constants: one byte value repeated in
// every byte of a word.
const (
	swarLow  = 0x0101010101010101
	swarHigh = 0x7f7f7f7f7f7f7f7f
)

// zeroBytes returns a word with the top bit set in exactly the bytes of x
// that are zero (the carry-free form, without the false positives of the
// shorter (x − 0x01…) & ^x & 0x80… test after a zero byte; H. S. Warren,
// Hacker's Delight, 2nd ed., "Find First 0-Byte", §6-1 — section number
// from memory). TestSplitWords checks it against the byte loop.
func zeroBytes(x uint64) uint64 {
	t := (x & swarHigh) + swarHigh
	return ^(t | x | swarHigh)
}

// splitWords is split for a delimiter other than blanks on a line without
// quotes, finding delimiters eight bytes at a time. It reports false, having
// done nothing useful, when the line holds a double quote.
func splitWords(dst []span, line []byte, delim byte) ([]span, bool) {
	dm, qm := swarLow*uint64(delim), swarLow*uint64('"')
	start, i := 0, 0
	for ; i+8 <= len(line); i += 8 {
		w := binary.LittleEndian.Uint64(line[i:])
		if zeroBytes(w^qm) != 0 {
			return dst, false
		}
		for m := zeroBytes(w ^ dm); m != 0; m &= m - 1 {
			k := i + bits.TrailingZeros64(m)>>3
			dst = append(dst, trimmed(line, start, k, delim))
			start = k + 1
		}
	}
	for ; i < len(line); i++ {
		switch line[i] {
		case '"':
			return dst, false
		case delim:
			dst = append(dst, trimmed(line, start, i, delim))
			start = i + 1
		}
	}
	return append(dst, trimmed(line, start, len(line), delim)), true
}

// trimmed returns the span [a, b) of line without blanks at either end (a
// tab is a blank unless it is the delimiter).
func trimmed(line []byte, a, b int, delim byte) span {
	tab := delim != '\t'
	for a < b && (line[a] == ' ' || tab && line[a] == '\t') {
		a++
	}
	for b > a && (line[b-1] == ' ' || tab && line[b-1] == '\t') {
		b--
	}
	return span{a, b}
}

// splitBytes is split byte by byte, for blank-separated lines and lines
// with quotes.
func splitBytes(dst []span, line []byte, delim byte) []span {
	n := len(line)
	tab := delim != '\t' // a tab is a blank unless it is the delimiter
	i := 0
	for {
		for i < n && (line[i] == ' ' || tab && line[i] == '\t') {
			i++
		}
		if delim == 0 && i >= n {
			break
		}
		start, end := i, i
		quoted := i < n && line[i] == '"'
		if quoted {
			end, i = unquote(line, i)
		}
		if delim == 0 {
			for i < n && line[i] != ' ' && line[i] != '\t' {
				i++
			}
		} else {
			for i < n && line[i] != delim {
				i++
			}
		}
		if !quoted {
			end = i
			for end > start && (line[end-1] == ' ' || tab && line[end-1] == '\t') {
				end--
			}
		}
		dst = append(dst, span{start, end})
		if i >= n {
			break
		}
		i++
	}
	return dst
}

// unquote removes the quotes of the field that starts with '"' at line[q],
// in place, turning "" into ". It returns the end of the unquoted text and
// the index after the closing quote (len(line) when there is none).
func unquote(line []byte, q int) (end, next int) {
	w, i := q, q+1
	for ; i < len(line); i++ {
		if line[i] == '"' {
			if i+1 < len(line) && line[i+1] == '"' {
				i++
			} else {
				return w, i + 1
			}
		}
		line[w] = line[i]
		w++
	}
	return w, i
}

// splitStrings splits a copy of line into strings.
func (r *csvReader) splitStrings(line []byte) []string {
	r.buf = append(r.buf[:0], line...)
	r.fields = split(r.fields, r.buf, r.delim)
	out := make([]string, len(r.fields))
	for i, f := range r.fields {
		out[i] = string(r.buf[f.a:f.b])
	}
	return out
}

// parseNum parses a number, accepting a decimal comma where the delimiter
// allows it. It reports false for text that is no number; a value too large
// for float64 comes back as ±Inf with true.
func (r *csvReader) parseNum(b []byte) (float64, bool) {
	var tmp [64]byte
	if r.decComma {
		if i := bytes.IndexByte(b, ','); i >= 0 {
			if len(b) > len(tmp) || bytes.IndexByte(b[i+1:], ',') >= 0 || bytes.IndexByte(b, '.') >= 0 {
				return 0, false
			}
			n := copy(tmp[:], b)
			tmp[i] = '.'
			b = tmp[:n]
		}
	}
	if v, ok := fastFloat(b); ok {
		return v, true
	}
	v, err := strconv.ParseFloat(string(b), 64)
	if err != nil {
		var ne *strconv.NumError
		if errors.As(err, &ne) && ne.Err == strconv.ErrRange {
			return v, true
		}
		return 0, false
	}
	return v, true
}

// pow10 holds the powers of ten that float64 represents exactly.
var pow10 = [...]float64{1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10,
	1e11, 1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22}

// fastFloat parses the plain decimals survey files hold ([+-]digits[.digits],
// a mantissa below 2^53, no exponent) and reports false for anything else.
// With a mantissa m < 2^53 and 10^k ≤ 10^22 both exact in
// float64, m / 10^k is one correctly rounded IEEE division, so the result
// equals strconv.ParseFloat's (W. D. Clinger, "How to Read Floating Point
// Numbers Accurately", PLDI 1990, the "fast path"; strconv uses the same
// step).
func fastFloat(b []byte) (float64, bool) {
	i, neg := 0, false
	if len(b) > 0 && (b[0] == '-' || b[0] == '+') {
		neg, i = b[0] == '-', 1
	}
	var m uint64
	start := i
	for ; i < len(b) && b[i]-'0' < 10; i++ {
		m = m*10 + uint64(b[i]-'0')
	}
	nd, frac := i-start, 0
	if i < len(b) && b[i] == '.' {
		i++
		fs := i
		for ; i < len(b) && b[i]-'0' < 10; i++ {
			m = m*10 + uint64(b[i]-'0')
		}
		frac = i - fs
		nd += frac
	}
	// 19 digits cannot overflow uint64; m < 2^53 is exact in float64.
	if i != len(b) || nd == 0 || nd > 19 || m >= 1<<53 || frac >= len(pow10) {
		return 0, false
	}
	v := float64(m) / pow10[frac]
	if neg {
		v = -v
	}
	return v, true
}

// physLine returns the next physical line without its line end, valid
// until the next call, and strips a UTF-8 byte-order mark from the first
// line.
func (r *csvReader) physLine() ([]byte, error) {
	line, err := r.br.ReadSlice('\n')
	if err == nil && r.lineNo > 0 {
		// The common case: the line lies whole in the bufio buffer and is
		// used (and possibly unquoted in place) before the next read.
		r.lineNo++
		line = line[:len(line)-1]
		if n := len(line); n > 0 && line[n-1] == '\r' {
			line = line[:n-1]
		}
		return line, nil
	}
	r.buf = append(r.buf[:0], line...)
	for err == bufio.ErrBufferFull {
		if len(r.buf) > maxLine {
			return nil, &ParseError{Path: r.path, Line: int(r.lineNo + 1), Err: fmt.Errorf("line longer than %d bytes: is this a text file?", maxLine)}
		}
		line, err = r.br.ReadSlice('\n')
		r.buf = append(r.buf, line...)
	}
	if err == io.EOF {
		if len(r.buf) == 0 {
			return nil, io.EOF
		}
	} else if err != nil {
		return nil, &ParseError{Path: r.path, Line: int(r.lineNo + 1), Err: err}
	}
	r.lineNo++
	b := r.buf
	if n := len(b); n > 0 && b[n-1] == '\n' {
		b = b[:n-1]
	}
	if n := len(b); n > 0 && b[n-1] == '\r' {
		b = b[:n-1]
	}
	if r.lineNo == 1 {
		b = bytes.TrimPrefix(b, []byte("\xef\xbb\xbf"))
	}
	return b, nil
}

// dataLine returns the next physical line that is neither blank nor a
// comment (first non-blank byte '#').
func (r *csvReader) dataLine() ([]byte, error) {
	for {
		line, err := r.physLine()
		if err != nil {
			return nil, err
		}
		i := 0
		for i < len(line) && (line[i] == ' ' || line[i] == '\t') {
			i++
		}
		if i == len(line) || line[i] == '#' {
			continue
		}
		return line, nil
	}
}

// Read implements Reader.
func (r *csvReader) Read(c *Chunk, max int) error {
	if max <= 0 {
		max = DefaultChunk
	}
	c.Reset() // keeps the capacity of c.ID and c.Code for reuse
	if r.idCol < 0 {
		c.ID = nil
	}
	if r.codeCol < 0 {
		c.Code = nil
	}
	if r.stnCol < 0 {
		c.Station = nil
	}
	c.Attr = attrsFor(c.Attr, r.attrNames)
	if r.err != nil {
		return r.err
	}
	sc := r.scratch
	sc.block, sc.lines = sc.block[:0], sc.lines[:0]
	var err error
	for len(sc.lines) < max && len(sc.block) < maxBlock {
		var line []byte
		var no int64
		if len(r.pending) > 0 {
			line, no = r.pending[0].text, r.pending[0].line
			r.pending = r.pending[1:]
		} else {
			if line, err = r.dataLine(); err != nil {
				break
			}
			no = r.lineNo
		}
		a := len(sc.block)
		sc.block = append(sc.block, line...)
		sc.lines = append(sc.lines, lineRef{a, len(sc.block), no})
	}
	if err != nil && err != io.EOF {
		r.err = err
		return err
	}
	if n := len(sc.lines); n > 0 {
		r.parse(c, n)
	}
	if c.Len() > 0 {
		return nil
	}
	r.err = io.EOF
	if r.rows > 0 && 2*r.rejected > r.rows {
		r.err = &ParseError{Path: r.path, Line: int(r.firstBad),
			Err: fmt.Errorf("%w: %d of %d data rows rejected, the first (this line) for %s", ErrTooManyRejected, r.rejected, r.rows, r.firstReason)}
	}
	return r.err
}

// attrsFor returns dst with one empty attribute per name, reusing dst when
// its names already match.
func attrsFor(dst []Attr, names []string) []Attr {
	same := len(dst) == len(names)
	for i := 0; same && i < len(names); i++ {
		same = dst[i].Name == names[i]
	}
	if same {
		return dst
	}
	if len(names) == 0 {
		return nil
	}
	dst = make([]Attr, len(names))
	for i, n := range names {
		dst[i].Name = n
	}
	return dst
}

// parse turns the chunk's n collected lines into records, in two halves
// at once when there are enough of them, then checks the ids for repeats.
func (r *csvReader) parse(c *Chunk, n int) {
	c.P, c.Line, c.Reject = grow(c.P, n), grow(c.Line, n), grow(c.Reject, n)
	if r.idCol >= 0 {
		c.ID = grow(c.ID, n)
	}
	if r.codeCol >= 0 {
		c.Code = grow(c.Code, n)
	}
	if r.stnCol >= 0 {
		c.Station = grow(c.Station, n)
	}
	for k := range c.Attr {
		c.Attr[k].Values = grow(c.Attr[k].Values, n)
	}
	sc := r.scratch
	ps := sc.parsers[:1]
	half := n
	if n >= parallelRows && runtime.GOMAXPROCS(0) > 1 {
		ps, half = sc.parsers[:2], n/2
	}
	var wg sync.WaitGroup
	if len(ps) == 2 {
		wg.Add(1)
		go func() {
			defer wg.Done()
			r.parseRange(&ps[1], c, half, n)
		}()
	}
	r.parseRange(&ps[0], c, 0, half)
	wg.Wait()
	r.rows += int64(n)
	for i := range ps {
		if p := &ps[i]; p.rejected > 0 {
			if r.rejected == 0 {
				r.firstBad, r.firstReason = p.firstBad, p.firstReason
			}
			r.rejected += p.rejected
		}
	}
	r.checkIDs(c)
}

// parseRange parses lines lo to hi of the chunk into records lo to hi of c
// with p. It only reads the reader's settings, so that two ranges can be
// parsed at once.
func (r *csvReader) parseRange(p *rowParser, c *Chunk, lo, hi int) {
	sc := r.scratch
	p.arena, p.ends, p.rejected = p.arena[:0], p.ends[:0], 0
	for i := lo; i < hi; i++ {
		l := sc.lines[i]
		r.row(p, c, i, sc.block[l.a:l.b], l.no)
	}
	if r.idCol < 0 && r.codeCol < 0 && r.stnCol < 0 {
		return
	}
	s := string(p.arena) // one allocation for all ids, codes and stations of the range
	a := 0
	for j := 0; j < hi-lo; j++ {
		idEnd, codeEnd, stnEnd := p.ends[3*j], p.ends[3*j+1], p.ends[3*j+2]
		if r.idCol >= 0 {
			c.ID[lo+j] = s[a:idEnd]
		}
		if r.codeCol >= 0 {
			c.Code[lo+j] = s[idEnd:codeEnd]
		}
		if r.stnCol >= 0 {
			c.Station[lo+j] = s[codeEnd:stnEnd]
		}
		a = stnEnd
	}
}

// row parses one data line into record i of c.
func (r *csvReader) row(p *rowParser, c *Chunk, i int, line []byte, no int64) {
	p.fields = split(p.fields, line, r.delim)
	f := p.fields
	nf := len(f)
	reason := ""
	for nf > r.ncols && f[nf-1].a == f[nf-1].b {
		nf-- // trailing empty fields from a trailing delimiter
	}
	if nf > r.ncols {
		if r.codeCol == r.ncols-1 {
			// An unquoted code holding the delimiter: the rest of the line.
			f[r.codeCol].b = f[nf-1].b
			nf = r.ncols
		} else {
			reason = fmt.Sprintf("%d fields where the columns name %d", nf, r.ncols)
		}
	}
	field := func(col int) ([]byte, bool) {
		if col < 0 || col >= nf {
			return nil, false
		}
		return line[f[col].a:f[col].b], true
	}
	var xyz [3]float64
	for k, col := range [3]int{r.eCol, r.nCol, r.zCol} {
		if reason != "" {
			break
		}
		b, ok := field(col)
		if !ok || len(b) == 0 {
			reason = "missing field " + r.info.Columns[col]
			break
		}
		xyz[k], reason = r.coord(b, r.info.Columns[col])
	}
	var id, code []byte
	if r.idCol >= 0 {
		id, _ = field(r.idCol)
		if len(id) == 0 && reason == "" {
			reason = "missing field id"
		}
	}
	if r.codeCol >= 0 {
		code, _ = field(r.codeCol)
	}
	var stn []byte
	if r.stnCol >= 0 {
		stn, _ = field(r.stnCol)
	}
	for k, col := range r.attrCols {
		v := math.NaN()
		if b, ok := field(col); ok && len(b) > 0 {
			var good bool
			if v, good = r.parseNum(b); !good && reason == "" {
				reason = fmt.Sprintf("non-numeric %s in column %s", quoteField(b), r.attrNames[k])
			}
		}
		c.Attr[k].Values[i] = v
	}
	if reason != "" {
		xyz = [3]float64{}
		if p.rejected == 0 {
			p.firstBad, p.firstReason = no, reason
		}
		p.rejected++
	}
	c.P[i] = r3.Vec{X: xyz[0], Y: xyz[1], Z: xyz[2]}
	c.Line[i] = no
	c.Reject[i] = reason
	p.arena = append(p.arena, id...)
	idEnd := len(p.arena)
	p.arena = append(p.arena, code...)
	codeEnd := len(p.arena)
	p.arena = append(p.arena, stn...)
	p.ends = append(p.ends, idEnd, codeEnd, len(p.arena))
}

// coord parses coordinate text b of column name and converts it to metres;
// it returns a reject reason, or "".
func (r *csvReader) coord(b []byte, name string) (float64, string) {
	v, ok := r.parseNum(b)
	switch {
	case !ok:
		return 0, fmt.Sprintf("non-numeric %s in column %s", quoteField(b), name)
	case math.IsNaN(v) || math.IsInf(v, 0) && bytes.ContainsAny(b, "iI"):
		return 0, fmt.Sprintf("not finite %s in column %s", quoteField(b), name)
	}
	v = r.unit.ToMetres(v)
	if !(math.Abs(v) <= MaxCoord) {
		return 0, fmt.Sprintf("out of range %s in column %s (|v| > %g m)", quoteField(b), name, float64(MaxCoord))
	}
	return v, ""
}

// quoteField quotes field text for a reject reason, cut to 24 bytes.
func quoteField(b []byte) string {
	if len(b) > 24 {
		return strconv.Quote(string(b[:24])) + "…"
	}
	return strconv.Quote(string(b))
}

// checkIDs looks for repeated ids in the chunk.
func (r *csvReader) checkIDs(c *Chunk) {
	r.ids.reserve(len(c.ID))
	for i, id := range c.ID {
		if id == "" {
			continue
		}
		if first, dup := r.ids.add(id, c.Line[i]); dup {
			if r.dups == 0 {
				r.dupID, r.dupLine, r.dupFirst = id, c.Line[i], first
			}
			r.dups++
		}
	}
}

func (r *csvReader) duplicateIDs() int64 { return r.dups }

// Info implements Reader. Warnings found while reading (repeated ids)
// appear once they are found.
func (r *csvReader) Info() Info {
	in := r.info
	in.Warnings = append([]string(nil), r.info.Warnings...)
	if r.dups > 0 {
		in.Warnings = append(in.Warnings, fmt.Sprintf("%d records repeat an earlier point id (first: %q on line %d, first seen on line %d); all were kept",
			r.dups, r.dupID, r.dupLine, r.dupFirst))
	}
	if r.ids.full {
		in.Warnings = append(in.Warnings, fmt.Sprintf("repeated-id check stopped after %d distinct ids", MaxTrackedIDs))
	}
	return in
}

// Close implements Reader.
func (r *csvReader) Close() error {
	if r.err == nil || r.err == io.EOF {
		r.err = &ParseError{Path: r.path, Line: int(r.lineNo), Err: errClosed}
	}
	if sc := r.scratch; sc != nil {
		// Nothing of the reader's reaches the caller except through
		// strings copied out of the arena, so its buffers can be reused.
		sc.br.Reset(nil)
		sc.ids = r.ids
		r.scratch, r.br = nil, nil
		if len(sc.ids.keys) <= maxPooledIDs {
			scratchPool.Put(sc)
		}
	}
	if r.close == nil {
		return nil
	}
	err := r.close()
	r.close = nil
	return err
}
