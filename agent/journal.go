package agent

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
	"time"

	"benchtender/campaign"
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
)

// Sign-off actions.
const (
	ActionApprove = "approve"
	ActionReject  = "reject"
)

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

// castagnoli is the CRC-32C table (RFC 3720, appendix B.4).
var castagnoli = crc32.MakeTable(crc32.Castagnoli)

// ErrLocked means another agent holds the state folder; ErrNetworkFS that
// the state folder is on a network file system.
var (
	ErrLocked    = errors.New("another benchtender runs on this state folder")
	ErrNetworkFS = errors.New("state folder on a network file system")
)

// ErrCorrupt means a journal record other than the last is damaged: the
// journal cannot be trusted and nothing may start on it.
var ErrCorrupt = errors.New("journal is corrupt")

// encodeEntry renders one line: "<length> <crc32c as 8 hex digits> <json>\n".
func encodeEntry(e Entry) ([]byte, error) {
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

// readJournal reads every record. A damaged or incomplete last record (a
// write torn by a crash) is reported through tornAt, the offset where the
// good records end; damage anywhere before it is ErrCorrupt.
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
	var pending error
	pendingLine := 0
	for {
		line, rerr := r.ReadBytes('\n')
		if len(line) == 0 && rerr == io.EOF {
			break
		}
		if rerr != nil && rerr != io.EOF {
			return nil, 0, false, rerr
		}
		lineNo++
		if pending != nil {
			// A damaged record with more after it is not a torn tail.
			return nil, 0, false, fmt.Errorf("%w: %s line %d: %v", ErrCorrupt, path, pendingLine, pending)
		}
		complete := line[len(line)-1] == '\n'
		e, derr := decodeLine(bytes.TrimSuffix(line, []byte("\n")))
		switch {
		case derr == nil && complete:
			entries = append(entries, e)
			off += int64(len(line))
		case !complete:
			return entries, off, true, nil
		default:
			pending, pendingLine = derr, lineNo
		}
		if rerr == io.EOF {
			break
		}
	}
	if pending != nil {
		return entries, off, true, nil
	}
	return entries, off, false, nil
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
// the records it holds. A torn last record is cut off and reported through
// truncated (the number of bytes removed); damage before the last record
// is an error wrapping ErrCorrupt, and then nothing is changed.
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
	line, err := encodeEntry(e)
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

func jsonMarshal(v any) ([]byte, error) { return json.Marshal(v) }
