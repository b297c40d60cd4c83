// Package record keeps a campaign's durable record: the journal, the
// audit trail, the state rebuilt from them, and the writes and locks they
// rest on. It knows nothing of the config, the loop or the planner's
// reasoning; the agent decides what to record, this package makes it
// last.
//
// What it guarantees, and how:
//
//   - An entry that Journal.Append or Audit.Append returned without error
//     is on disk (written, then fsynced). After an error the journal or
//     trail is closed for good (Usable reports false): whether the bytes
//     reached the disk is unknown, and a retry could write them twice.
//   - A crash leaves at most a torn last record, and only that is cut at
//     open: a last line without its line end that can be the start of a
//     record. A complete record that does not decode (length, CRC-32C or
//     JSON), wherever it is, is ErrCorrupt naming the line, and nothing is
//     changed. A whole record lacking only its line end is kept.
//   - The audit trail is a chain of HMAC-SHA256 (RFC 2104) under a key the
//     caller keeps apart: an edit, deletion, reordering or insertion makes
//     VerifyAudit fail, and without the key no entry can be forged.
//   - Every journal entry carries the trail's head, and every journal
//     entry is copied into the trail, so CrossCheck finds either file cut
//     at its end. It cannot find both cut at matching points by someone
//     who can write the folder; a copy of the head kept elsewhere can.
//   - State is a pure function of the journal (Replay): nothing else is
//     kept, so a restart sees exactly what was recorded.
//   - WriteFileAtomic and Writer leave a reader either no file or the
//     whole file (temp file beside the target, fsync, rename, folder
//     fsync). A staged file is complete under its temp name before any
//     intent is journalled, so that after a crash the temp file's
//     presence tells whether the rename happened.
//   - LockState keeps a second process off the same state folder; the
//     kernel drops the lock with the process. CheckLocalFS refuses
//     network file systems, where neither locks nor fsync hold.
package record
