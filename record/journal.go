package record

import (
	"bufio"
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"hash/crc32"
	"io"
	"os"
	"strconv"
	"strings"
	"time"

	"benchtender/campaign"
	"benchtender/planner"
	"benchtender/safety"
)

// Entry kinds in the journal.
const (
	KindIngest     = "ingest"     // a result file parsed and accepted
	KindQuarantine = "quarantine" // a result file refused, copied aside
	KindDuplicate  = "duplicate"  // content already ingested under another name
	KindProposal   = "proposal"   // a setpoint proposed and gated
	KindSignoff    = "signoff"    // a person approved or rejected a held move
	KindHandoff    = "handoff"    // a setpoint file about to be written (intent, with its action id)
	KindHandoffOK  = "handoff-ok" // the setpoint file is in place
	KindHandoffNo  = "handoff-no" // the setpoint file was not written: the run is ready again
	KindStop       = "stop"       // the stopping rule says no more runs are worth it
	KindExpire     = "expire"     // a held move lapsed unsigned
	KindRegate     = "regate"     // an approved move gated again (limits edited)
	KindAllStop    = "all-stop"   // the all-stop file appeared: every handoff halted
	KindResume     = "resume"     // a person cleared the all-stop
	KindCorrection = "correction" // a person corrects an earlier audit entry
	KindSetAside   = "set-aside"  // the planner set a stalled basin aside, for good
	KindRefit      = "refit"      // a person asked for the model to be fitted afresh
)

// Sign-off actions.
const (
	ActionApprove = "approve"
	ActionReject  = "reject"
)

// Reading is one value a result file gave, in its unit.
type Reading struct {
	Value float64 `json:"value"`
	Unit  string  `json:"unit,omitempty"`
}

// Entry is one journal record. Fields not used by a kind are left empty.
type Entry struct {
	Seq  int64     `json:"seq"`
	Time time.Time `json:"time"`
	Kind string    `json:"kind"`
	Run  string    `json:"run,omitempty"`

	// ingest, quarantine, duplicate
	File   string  `json:"file,omitempty"`
	SHA256 string  `json:"sha256,omitempty"`
	Value  float64 `json:"value,omitempty"`
	Failed string  `json:"failed,omitempty"`
	// Values are every value and derived value the file gave (ingest).
	Values map[string]Reading `json:"values,omitempty"`
	// Revision numbers a later version of a run's result (2 for the
	// second file ingested for it); the latest counts.
	Revision int `json:"revision,omitempty"`
	// Point is the setpoint of a proposal or handoff, or the factor
	// values a result file gave for a run not handed off by us.
	Point campaign.Point `json:"point,omitempty"`

	// proposal
	Method   string           `json:"method,omitempty"`
	Score    float64          `json:"score,omitempty"`
	Decision *safety.Decision `json:"decision,omitempty"`
	// Aside is a region the planner set aside (set-aside): decided once,
	// passed back to the planner with every later request.
	Aside *planner.Aside `json:"aside,omitempty"`
	// AuditHead is the audit trail's head ("seq:hash") when this entry
	// was written: cutting either file is then found (anchor.go).
	AuditHead string `json:"audit_head,omitempty"`
	// Stopping is the stopping rule's verdict at this proposal, each test
	// with its value and threshold (empty when the rule is off).
	Stopping string `json:"stopping,omitempty"`

	// signoff
	Action string `json:"action,omitempty"`
	By     string `json:"by,omitempty"`
	// Name is the printed name of the person signing.
	Name string `json:"name,omitempty"`
	// Partial marks the first of two approvals a move needs.
	Partial bool `json:"partial,omitempty"`
	// Replaces describes the earlier first approval (who, when, which
	// values) that this approval took the place of, when asked to.
	Replaces string `json:"replaces,omitempty"`
	// Request is the id of the sign-off request, used once.
	Request string `json:"request,omitempty"`
	// Limits is the version of the limits a sign-off or decision was made
	// under.
	Limits string `json:"limits,omitempty"`
	// Alternative is the best proposal inside every limit, shown beside
	// a held move.
	Alternative campaign.Point `json:"alternative,omitempty"`

	// Reason is why: a quarantine's parse error, a sign-off's reason.
	Reason string `json:"reason,omitempty"`
	// Copy is where a quarantined file was copied, or an ingested one
	// archived.
	Copy string `json:"copy,omitempty"`
	// Corrects is the audit entry a correction refers to.
	Corrects int64 `json:"corrects,omitempty"`
	// ActionID names one handoff; the setpoint file carries it, so that
	// after a crash the journal can tell whether the file was written.
	ActionID string `json:"action_id,omitempty"`
	// Instrument names the instrument a run was handed off to.
	Instrument string `json:"instrument,omitempty"`
}

// SignoffMeaning is what a sign-off entry's signature means (21 CFR Part
// 11 §11.50(a)(3)): the audit trail and the export both say it this way.
func (e Entry) SignoffMeaning() string {
	switch {
	case e.Action == ActionApprove && e.Partial:
		return "first of two approvals"
	case e.Action == ActionApprove:
		return "approval"
	}
	return "rejection"
}

// castagnoli is the CRC-32C table (RFC 3720, appendix B.4).
var castagnoli = crc32.MakeTable(crc32.Castagnoli)

// ErrLocked means another agent holds the state folder; ErrNetworkFS that
// the state folder is on a network file system.
var (
	ErrLocked    = errors.New("another benchtender runs on this state folder")
	ErrNetworkFS = errors.New("state folder on a network file system")
)

// ErrCorrupt means a complete journal record is damaged: the journal
// cannot be trusted and nothing may start on it.
var ErrCorrupt = errors.New("journal is corrupt")

// EncodeEntry renders one line: "<length> <crc32c as 8 hex digits> <json>\n".
func EncodeEntry(e Entry) ([]byte, error) {
	body, err := json.Marshal(e)
	if err != nil {
		return nil, err
	}
	line := fmt.Appendf(nil, "%d %08x ", len(body), crc32.Checksum(body, castagnoli))
	line = append(line, body...)
	return append(line, '\n'), nil
}

// decodeLine parses one line without its newline.
func decodeLine(line []byte) (Entry, error) {
	var e Entry
	sp1 := bytes.IndexByte(line, ' ')
	if sp1 < 0 || len(line) < sp1+10 || line[sp1+9] != ' ' {
		return e, errors.New("malformed record header")
	}
	n, err := strconv.Atoi(string(line[:sp1]))
	if err != nil {
		return e, fmt.Errorf("malformed length: %w", err)
	}
	sum, err := strconv.ParseUint(string(line[sp1+1:sp1+9]), 16, 32)
	if err != nil {
		return e, fmt.Errorf("malformed checksum: %w", err)
	}
	body := line[sp1+10:]
	if len(body) != n {
		return e, fmt.Errorf("length %d, record has %d bytes", n, len(body))
	}
	if crc32.Checksum(body, castagnoli) != uint32(sum) {
		return e, errors.New("checksum mismatch")
	}
	if err := json.Unmarshal(body, &e); err != nil {
		return e, fmt.Errorf("record: %w", err)
	}
	return e, nil
}

// readJournal reads every record. A last line without its line end is a
// write torn by a crash: Append writes the line end last and returns only
// once the whole line is on disk. A part of a record is dropped (nothing
// was done on the strength of it); a whole, valid record that lacks only
// its line end is kept. Either is reported through torn, with goodLen the
// offset where the kept records' bytes end. A line that has its line end but does
// not decode (bad checksum, length or JSON) was written whole and damaged
// afterwards: that, wherever it is, is ErrCorrupt naming the line. (Cutting
// such a record as if torn once made a handoff the instrument had taken
// look unsent, and it was sent again: issue 19.)
func readJournal(path string) (entries []Entry, goodLen int64, torn bool, err error) {
	f, err := os.Open(path)
	if errors.Is(err, os.ErrNotExist) {
		return nil, 0, false, nil
	}
	if err != nil {
		return nil, 0, false, err
	}
	defer f.Close()
	r := bufio.NewReaderSize(f, 1<<16)
	var off int64
	lineNo := 0
	for {
		line, rerr := r.ReadBytes('\n')
		if len(line) == 0 && rerr == io.EOF {
			break
		}
		if rerr != nil && rerr != io.EOF {
			return nil, 0, false, rerr
		}
		lineNo++
		if line[len(line)-1] != '\n' {
			// Only the last line can lack its line end. A whole, valid
			// record that lacks only that (and perhaps has zero bytes
			// after it) is kept: whether or not its Append returned,
			// what it records is checked against the files at start
			// (recoverHandoffs), and dropping it could forget a handoff
			// that happened. goodLen then ends after it, and the caller
			// writes the line end.
			whole := bytes.TrimRight(line, "\x00")
			if e, derr := decodeLine(whole); derr == nil {
				return append(entries, e), off + int64(len(whole)), true, nil
			}
			// Otherwise torn, if what is there can be the start of a
			// record.
			if err := tornPrefix(line); err != nil {
				return nil, 0, false, fmt.Errorf("%w: %s line %d (byte %d): the last line has no line end, yet is no torn record: %v; compare it with the audit trail (audit.log) and restore the journal from a backup", ErrCorrupt, path, lineNo, off, err)
			}
			return entries, off, true, nil
		}
		e, derr := decodeLine(bytes.TrimSuffix(line, []byte("\n")))
		if derr != nil {
			return nil, 0, false, fmt.Errorf("%w: %s line %d (byte %d): %v; the record was written whole and damaged since, so nothing is cut or repaired: compare it with the same entry in the audit trail (audit.log) and restore the journal from a backup", ErrCorrupt, path, lineNo, off, derr)
		}
		entries = append(entries, e)
		off += int64(len(line))
		if rerr == io.EOF {
			break
		}
	}
	return entries, off, false, nil
}

// lastByte returns the byte of the file at path just before offset end
// (0 when it cannot be read).
func lastByte(path string, end int64) byte {
	f, err := os.Open(path)
	if err != nil {
		return 0
	}
	defer f.Close()
	b := make([]byte, 1)
	if _, err := f.ReadAt(b, end-1); err != nil {
		return 0
	}
	return b[0]
}

// tornPrefix returns nil when line (a last line, without its line end)
// can be what a crash left of an Append: the start of "<length> <crc>
// <json>", at most as long as the record, possibly followed by zero bytes
// (some file systems extend a file before its data reach the disk). A
// line longer than its record, or with other characters in its header,
// is damage, not a torn write.
func tornPrefix(line []byte) error {
	line = bytes.TrimRight(line, "\x00")
	sp1 := bytes.IndexByte(line, ' ')
	digits := line
	if sp1 >= 0 {
		digits = line[:sp1]
	}
	for _, c := range digits {
		if c < '0' || c > '9' {
			return fmt.Errorf("%q is not a record length", digits)
		}
	}
	if sp1 < 0 {
		return nil
	}
	n, err := strconv.Atoi(string(digits))
	if err != nil {
		return fmt.Errorf("malformed length: %w", err)
	}
	rest := line[sp1+1:]
	hexLen := min(len(rest), 8)
	for _, c := range rest[:hexLen] {
		if !strings.ContainsRune("0123456789abcdefABCDEF", rune(c)) {
			return fmt.Errorf("%q is not a checksum", rest[:hexLen])
		}
	}
	if len(rest) <= 8 {
		return nil
	}
	if rest[8] != ' ' {
		return errors.New("malformed record header")
	}
	if body := rest[9:]; len(body) > n {
		return fmt.Errorf("%d bytes where the record declares %d", len(body), n)
	}
	return nil
}

// ReadJournal reads a journal without changing it, for commands that only
// look (holds, status). A torn last record is skipped.
func ReadJournal(path string) ([]Entry, error) {
	entries, _, _, err := readJournal(path)
	return entries, err
}

// Journal is the append-only record of a campaign. Each Append is written
// and fsynced before it returns.
type Journal struct {
	path string
	f    *os.File
	seq  int64
}

// OpenJournal opens (or creates) the journal at path and returns it with
// the records it holds. A torn last record (no line end) is cut off and
// reported through truncated (the number of bytes removed); a damaged
// complete record, the last one included, is an error wrapping
// ErrCorrupt, and then nothing is changed.
func OpenJournal(path string) (*Journal, []Entry, int64, error) {
	entries, good, torn, err := readJournal(path)
	if err != nil {
		return nil, nil, 0, fmt.Errorf("open journal: %w", err)
	}
	var cut int64
	if torn {
		fi, err := os.Stat(path)
		if err != nil {
			return nil, nil, 0, fmt.Errorf("open journal: %w", err)
		}
		cut = fi.Size() - good
		if err := os.Truncate(path, good); err != nil {
			return nil, nil, 0, fmt.Errorf("open journal: cut torn record: %w", err)
		}
	}
	f, err := os.OpenFile(path, os.O_CREATE|os.O_WRONLY|os.O_APPEND, 0o644)
	if err != nil {
		return nil, nil, 0, fmt.Errorf("open journal: %w", err)
	}
	if torn && good > 0 && lastByte(path, good) != '\n' {
		// A whole last record without its line end: kept, and ended.
		if _, err := f.Write([]byte{'\n'}); err != nil {
			f.Close()
			return nil, nil, 0, fmt.Errorf("open journal: end the last record: %w", err)
		}
		cut--
	}
	if err := f.Sync(); err != nil {
		f.Close()
		return nil, nil, 0, fmt.Errorf("open journal: sync: %w", err)
	}
	j := &Journal{path: path, f: f}
	if n := len(entries); n > 0 {
		j.seq = entries[n-1].Seq
	}
	return j, entries, cut, nil
}

// Append writes e with the next sequence number and fsyncs. On error the
// journal must not be used again: whether the record reached the disk is
// unknown, and a retry could write it twice.
func (j *Journal) Append(e Entry) (Entry, error) {
	if j.f == nil {
		return e, errors.New("journal: append after a failed write or close")
	}
	e.Seq = j.seq + 1
	line, err := EncodeEntry(e)
	if err != nil {
		return e, fmt.Errorf("journal: encode: %w", err)
	}
	if _, err := j.f.Write(line); err != nil {
		j.fail()
		return e, fmt.Errorf("journal: write: %w", err)
	}
	if err := j.f.Sync(); err != nil {
		j.fail()
		return e, fmt.Errorf("journal: sync: %w", err)
	}
	j.seq = e.Seq
	return e, nil
}

// Usable says whether the journal can still be appended to: false after
// a failed write or Close.
func (j *Journal) Usable() bool { return j != nil && j.f != nil }

// Seq is the sequence number of the last entry.
func (j *Journal) Seq() int64 { return j.seq }

func (j *Journal) fail() {
	j.f.Close()
	j.f = nil
}

// Close closes the journal.
func (j *Journal) Close() error {
	if j.f == nil {
		return nil
	}
	err := j.f.Close()
	j.f = nil
	return err
}
