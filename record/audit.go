package record

import (
	"bufio"
	"bytes"
	"crypto/hmac"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"time"
)

// AuditEntry is one line of the audit trail: who did what to which
// subject, when and why. Entries are chained with a secret key: Hash is
// HMAC-SHA256 (RFC 2104) under the trail's key of the previous entry's
// hash and this entry's fields, so an edit, deletion or reordering breaks
// the chain, and without the key it cannot be computed again (what 21 CFR
// Part 11 §11.10(e) asks of an audit trail: secure, computer-generated,
// time-stamped, never obscuring earlier entries). Entries cut from the
// end are found by the journal, whose every entry carries the trail's
// head (CrossCheck). A correction is a new entry whose Corrects names the
// entry it corrects; nothing is edited or deleted.
type AuditEntry struct {
	Seq int64 `json:"seq"`
	// Time is UTC in ISO 8601 (RFC 3339 with nanoseconds).
	Time    string `json:"time"`
	Actor   string `json:"actor"`
	Name    string `json:"name,omitempty"` // printed name of a person signing (§11.50)
	Action  string `json:"action"`
	Subject string `json:"subject"`
	Reason  string `json:"reason,omitempty"`
	// Meaning is what a signature means (§11.50(a)(3)): "approval",
	// "rejection", "second approval".
	Meaning  string          `json:"meaning,omitempty"`
	Detail   json.RawMessage `json:"detail,omitempty"`
	Corrects int64           `json:"corrects,omitempty"`
	Prev     string          `json:"prev"`
	Hash     string          `json:"hash"`
}

// chainHash is HMAC-SHA256 under key of (prev hash || JSON of the entry
// without its hash).
func chainHash(e AuditEntry, key []byte) string {
	e.Hash = ""
	b, _ := json.Marshal(e)
	h := hmac.New(sha256.New, key)
	h.Write([]byte(e.Prev))
	h.Write(b)
	return hex.EncodeToString(h.Sum(nil))
}

// ErrAuditBroken means the audit trail's chain does not verify.
var ErrAuditBroken = errors.New("audit trail does not verify")

// ErrAuditTorn means the trail's last line is incomplete: a write cut
// short by a crash. The agent cuts it off at start and says so in the
// trail; everything before it verifies.
var ErrAuditTorn = errors.New("audit trail ends in a torn entry")

// VerifyAudit checks the whole chain and returns the number of entries.
// It names the first entry that breaks it.
func VerifyAudit(path string, key []byte) (int, error) {
	f, err := os.Open(path)
	if errors.Is(err, os.ErrNotExist) {
		return 0, nil
	}
	if err != nil {
		return 0, err
	}
	defer f.Close()
	r := bufio.NewReaderSize(f, 1<<16)
	prev := ""
	n := 0
	for {
		line, rerr := r.ReadBytes('\n')
		if len(line) == 0 && rerr == io.EOF {
			break
		}
		if rerr != nil && rerr != io.EOF {
			return n, rerr
		}
		if line[len(line)-1] != '\n' {
			return n, fmt.Errorf("%w after entry %d", ErrAuditTorn, n)
		}
		n++
		var e AuditEntry
		if err := json.Unmarshal(line, &e); err != nil {
			return n, fmt.Errorf("%w: line %d is not an entry: %v", ErrAuditBroken, n, err)
		}
		switch {
		case e.Seq != int64(n):
			return n, fmt.Errorf("%w: line %d holds entry %d (an entry was deleted, added or moved)", ErrAuditBroken, n, e.Seq)
		case e.Prev != prev:
			return n, fmt.Errorf("%w: entry %d does not follow entry %d (deleted or reordered)", ErrAuditBroken, e.Seq, e.Seq-1)
		case chainHash(e, key) != e.Hash:
			return n, fmt.Errorf("%w: entry %d was changed after it was written, or written without the trail's key", ErrAuditBroken, e.Seq)
		}
		if _, err := time.Parse(time.RFC3339Nano, e.Time); err != nil {
			return n, fmt.Errorf("%w: entry %d has no ISO 8601 time", ErrAuditBroken, e.Seq)
		}
		prev = e.Hash
	}
	return n, nil
}

// Audit is the trail open for appending: chained entries, fsynced one by
// one.
type Audit struct {
	f    *os.File
	key  []byte
	seq  int64
	prev string
}

// Head is the trail's last entry, as "seq:hash" ("0:" when empty): what
// every journal entry carries, so that cutting either file is found.
func (a *Audit) Head() string { return fmt.Sprintf("%d:%s", a.seq, a.prev) }

func AuditPath(stateDir string) string { return filepath.Join(stateDir, "audit.log") }

// OpenAudit verifies the trail and opens it for appending. A torn last
// entry (a crash while writing) is cut off and reported by torn; any other
// damage is an error and nothing is changed.
func OpenAudit(path string, key []byte) (a *Audit, torn bool, err error) {
	n, err := VerifyAudit(path, key)
	if errors.Is(err, ErrAuditTorn) {
		good, serr := auditPrefixLen(path, n)
		if serr != nil {
			return nil, false, serr
		}
		if err := os.Truncate(path, good); err != nil {
			return nil, false, fmt.Errorf("audit: cut torn entry: %w", err)
		}
		torn, err = true, nil
	}
	if err != nil {
		return nil, false, err
	}
	a, err = openAuditAt(path, n)
	if a != nil {
		a.key = key
	}
	return a, torn, err
}

// auditPrefixLen is the byte length of the first n lines.
func auditPrefixLen(path string, n int) (int64, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return 0, err
	}
	var off int64
	for i := 0; i < n; i++ {
		j := bytes.IndexByte(data[off:], '\n')
		off += int64(j) + 1
	}
	return off, nil
}

func openAuditAt(path string, n int) (*Audit, error) {
	var err error
	a := &Audit{seq: int64(n)}
	if n > 0 {
		last, err := lastAudit(path)
		if err != nil {
			return nil, err
		}
		a.prev = last.Hash
	}
	a.f, err = os.OpenFile(path, os.O_CREATE|os.O_WRONLY|os.O_APPEND, 0o644)
	if err != nil {
		return nil, err
	}
	return a, nil
}

func lastAudit(path string) (AuditEntry, error) {
	f, err := os.Open(path)
	if err != nil {
		return AuditEntry{}, err
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	sc.Buffer(make([]byte, 1<<20), 1<<26)
	var last []byte
	for sc.Scan() {
		last = append(last[:0], sc.Bytes()...)
	}
	var e AuditEntry
	err = json.Unmarshal(last, &e)
	return e, err
}

func (a *Audit) Append(e AuditEntry, now time.Time) (AuditEntry, error) {
	if a.f == nil {
		return e, errors.New("audit: append after a failed write")
	}
	e.Seq = a.seq + 1
	e.Time = now.UTC().Format(time.RFC3339Nano)
	e.Prev = a.prev
	e.Hash = chainHash(e, a.key)
	b, err := json.Marshal(e)
	if err != nil {
		return e, err
	}
	if _, err := a.f.Write(append(b, '\n')); err != nil {
		a.f.Close()
		a.f = nil
		return e, fmt.Errorf("audit: write: %w", err)
	}
	if err := a.f.Sync(); err != nil {
		a.f.Close()
		a.f = nil
		return e, fmt.Errorf("audit: sync: %w", err)
	}
	a.seq, a.prev = e.Seq, e.Hash
	return e, nil
}

// Usable says whether the trail can still be appended to: false after a
// failed write.
func (a *Audit) Usable() bool { return a != nil && a.f != nil }

// Close closes the trail.
func (a *Audit) Close() error {
	if a == nil || a.f == nil {
		return nil
	}
	return a.f.Close()
}

// ReadAudit returns every entry of the audit trail (for status and
// reports); it does not verify the chain.
func ReadAudit(path string) ([]AuditEntry, error) {
	f, err := os.Open(path)
	if errors.Is(err, os.ErrNotExist) {
		return nil, nil
	}
	if err != nil {
		return nil, err
	}
	defer f.Close()
	var out []AuditEntry
	sc := bufio.NewScanner(f)
	sc.Buffer(make([]byte, 1<<20), 1<<26)
	for sc.Scan() {
		var e AuditEntry
		if json.Unmarshal(sc.Bytes(), &e) == nil {
			out = append(out, e)
		}
	}
	return out, sc.Err()
}
