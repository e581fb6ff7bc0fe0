package telemetry

import "bytes"

// maxRecordBytes bounds one record of a mapped log: a quoted field may span
// lines, and a stray quote must not make the rest of the file one record.
const maxRecordBytes = 1 << 20

const whyUnclosed = "a quoted field is not closed"

// splitter cuts delimited records into fields as RFC 4180 describes them:
// a field in double quotes may hold the delimiter, line breaks and doubled
// quotes (""); spaces around a field are not part of it. Unquoted fields
// may not hold a quote (a bare quote is refused, as RFC 4180 has it, rather
// than guessed at). The fields alias the record or the splitter's buffer
// until the next call.
type splitter struct {
	delim  byte
	fields [][]byte
	// offs holds the byte offset of each field in the record when withOffs
	// is set (for the line number of a refusal; not needed otherwise).
	offs     []int
	withOffs bool
	buf      []byte
}

// split cuts a record without quotes: the fast path every plain row takes.
func (s *splitter) split(b []byte) [][]byte {
	s.fields = s.fields[:0]
	for {
		i := bytes.IndexByte(b, s.delim)
		if i < 0 {
			return append(s.fields, b)
		}
		s.fields = append(s.fields, b[:i])
		b = b[i+1:]
	}
}

// splitQuoted cuts a record that holds quotes. On a malformed record it
// returns the byte offset of the fault and why.
func (s *splitter) splitQuoted(b []byte) ([][]byte, int, string) {
	s.fields, s.offs = s.fields[:0], s.offs[:0]
	s.buf = s.buf[:0]
	i := 0
	for {
		start := i
		for i < len(b) && s.blank(b[i]) {
			i++
		}
		if i < len(b) && b[i] == '"' {
			open := i
			i++
			j := quoteIndex(b[i:])
			if j < 0 {
				return nil, open, whyUnclosed
			}
			// Most quoted fields hold no doubled quote: slice the record.
			field := b[i : i+j]
			i += j + 1
			if i < len(b) && b[i] == '"' {
				from := len(s.buf)
				s.buf = append(s.buf, field...)
				for i < len(b) && b[i] == '"' {
					s.buf = append(s.buf, '"')
					i++
					j := bytes.IndexByte(b[i:], '"')
					if j < 0 {
						return nil, open, whyUnclosed
					}
					s.buf = append(s.buf, b[i:i+j]...)
					i += j + 1
				}
				field = s.buf[from:len(s.buf):len(s.buf)]
			}
			for i < len(b) && s.blank(b[i]) {
				i++
			}
			if i < len(b) && b[i] != s.delim {
				return nil, i, "text after a closing quote (a quote inside a quoted field is written twice)"
			}
			s.fields = append(s.fields, field)
			if s.withOffs {
				s.offs = append(s.offs, open)
			}
		} else {
			j := bytes.IndexByte(b[i:], s.delim)
			end := len(b)
			if j >= 0 {
				end = i + j
			}
			if q := bytes.IndexByte(b[i:end], '"'); q >= 0 {
				return nil, i + q, "a quote inside an unquoted field (quote the whole field and write the quote twice)"
			}
			s.fields = append(s.fields, b[start:end])
			if s.withOffs {
				s.offs = append(s.offs, start)
			}
			i = end
		}
		if i >= len(b) {
			return s.fields, 0, ""
		}
		i++ // the delimiter
	}
}

// quoteIndex is bytes.IndexByte(b, '"') with a plain loop for the first
// bytes: most quoted fields are short numbers, where the call costs more
// than the scan.
func quoteIndex(b []byte) int {
	for i := range min(len(b), 24) {
		if b[i] == '"' {
			return i
		}
	}
	if len(b) <= 24 {
		return -1
	}
	if j := bytes.IndexByte(b[24:], '"'); j >= 0 {
		return 24 + j
	}
	return -1
}

// blank reports whether c is space around a field (a tab is a delimiter
// when the map says so).
func (s *splitter) blank(c byte) bool { return c == ' ' || (c == '\t' && s.delim != '\t') }

// quotesOpen reports whether b leaves a quoted field open when quote were
// open before it: every quote toggles, which holds for well-formed records
// (an escaped quote toggles twice); malformed ones are refused by splitQuoted.
func quotesOpen(b []byte, open bool) bool {
	return open != (bytes.Count(b, []byte{'"'})%2 == 1)
}
