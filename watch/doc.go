// Package watch turns an export folder into a stream of settled files.
//
// fsnotify events only hint that something changed; a periodic scan of the
// folder is the truth, so a file is found even when no event ever comes
// (network shares send none). A file is reported only once its size and
// modification time have stayed the same across two looks that span the
// settle interval, and again only if it changes afterwards.
//
// The package knows paths and sizes, nothing of instruments or formats; it
// only reads the folder and never writes to it.
package watch
