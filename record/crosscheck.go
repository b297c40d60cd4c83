package record

import (
	"encoding/json"
	"errors"
	"fmt"
	"strconv"
	"strings"
)

// The journal and the audit trail vouch for each other. Every journal
// entry carries the trail's head (AuditHead, "seq:hash") as it stood when
// the entry was written, and every journal entry is copied into the trail
// (its JSON in Detail, journal seq included). So:
//
//   - entries cut from the trail's end: the journal's last entry names a
//     head the trail no longer has;
//   - entries cut from the journal's end: the trail holds journal entries
//     the journal no longer has;
//   - a trail edited or forged: its keyed chain does not verify.
//
// The one gap a crash can leave, the journal's last entry written and
// its audit entry not yet, is closed at start by auditing that entry with
// its own journal time, and only when the trail's head is exactly the one
// the entry names. Any other mismatch stops the agent before anything
// happens (ErrRecordMismatch); nothing is rebuilt. A person who has
// established what happened records that with "benchtender audit accept",
// an audited entry from which the check starts again.
//
// Cutting both files at matching points, by someone who can write the
// state folder, is not found this way; the trail's key (kept apart) stops
// a forgery, not a cut. Keep copies of the audit head elsewhere (status
// and the report print it).

// way no crash explains.
var ErrRecordMismatch = errors.New("the journal and the audit trail disagree")

// ActionAccept is the audit action of a person accepting a mismatch.
const ActionAccept = "record mismatch accepted"

// AcceptDetail is the Detail of an acceptance: the journal's last seq at
// that moment, from which the check starts again.
type AcceptDetail struct {
	JournalSeq int64  `json:"journal_seq"`
	Finding    string `json:"finding"`
}

// CrossCheck compares the journal's entries with the audit trail. It
// returns the journal entries to audit now (the crash gap, at most one),
// or ErrRecordMismatch saying what disagrees.
func CrossCheck(entries []Entry, trail []AuditEntry) ([]Entry, error) {
	base := int64(0)
	from := 0
	for i, ae := range trail {
		if ae.Action == ActionAccept {
			var d AcceptDetail
			if json.Unmarshal(ae.Detail, &d) == nil {
				base, from = d.JournalSeq, i+1
			}
		}
	}
	audited := base
	for _, ae := range trail[from:] {
		if s := DetailSeq(ae); s > audited {
			audited = s
		}
	}
	last := int64(0)
	if n := len(entries); n > 0 {
		last = entries[n-1].Seq
	}
	if audited > last {
		return nil, fmt.Errorf("%w: the audit trail records journal entry %d, but the journal ends at entry %d: the journal was cut or replaced", ErrRecordMismatch, audited, last)
	}
	var missing []Entry
	for _, e := range entries {
		if e.Seq > audited {
			missing = append(missing, e)
		}
	}
	head := "0:"
	if n := len(trail); n > 0 {
		head = fmt.Sprintf("%d:%s", trail[n-1].Seq, trail[n-1].Hash)
	}
	switch {
	case len(missing) > 1:
		return nil, fmt.Errorf("%w: the audit trail lacks journal entries %d to %d: it was cut after they were written; nothing is rebuilt", ErrRecordMismatch, missing[0].Seq, last)
	case len(missing) == 1 && missing[0].AuditHead != "" && missing[0].AuditHead != head:
		return nil, fmt.Errorf("%w: journal entry %d was written when the audit trail's head was %s, but the trail now ends at %s: entries were cut from the trail", ErrRecordMismatch, last, missing[0].AuditHead, head)
	case len(missing) == 1:
		return missing, nil
	}
	// Everything audited: the last journal entry's head must still be in
	// the trail as it was.
	if n := len(entries); n > 0 && entries[n-1].AuditHead != "" && entries[n-1].Seq > base {
		seq, hash, _ := strings.Cut(entries[n-1].AuditHead, ":")
		s, _ := strconv.Atoi(seq)
		switch {
		case s > len(trail):
			return nil, fmt.Errorf("%w: journal entry %d was written when the audit trail had %d entries; it has %d: entries were cut from the trail", ErrRecordMismatch, entries[n-1].Seq, s, len(trail))
		case s > 0 && trail[s-1].Hash != hash:
			return nil, fmt.Errorf("%w: audit entry %d is not the one journal entry %d saw", ErrRecordMismatch, s, entries[n-1].Seq)
		}
	}
	return nil, nil
}

// DetailSeq is the journal seq an audit entry copies (0 for notes).
func DetailSeq(ae AuditEntry) int64 {
	if len(ae.Detail) == 0 || ae.Action == ActionAccept {
		return 0
	}
	var j struct {
		Seq int64 `json:"seq"`
	}
	if json.Unmarshal(ae.Detail, &j) != nil {
		return 0
	}
	return j.Seq
}
