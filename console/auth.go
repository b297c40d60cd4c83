package console

import (
	"bufio"
	"crypto/hmac"
	"crypto/rand"
	"crypto/sha256"
	"crypto/subtle"
	"encoding/hex"
	"fmt"
	"os"
	"runtime"
	"strings"
	"sync"
	"time"
)

// user is a person who may sign in with an access token.
type user struct {
	ID, Name string
	digest   [sha256.Size]byte // SHA-256 of the token; the token itself is not kept
}

// minTokenLen is the shortest token accepted (128 bits as hex is 32).
const minTokenLen = 32

// loadTokens reads a tokens file: one "TOKEN USER-ID PRINTED NAME" a
// line, blank lines and lines starting with # skipped. It refuses a file
// that group or others can read: whoever reads it can sign.
func loadTokens(path string) ([]user, error) {
	fi, err := os.Stat(path)
	if err != nil {
		return nil, fmt.Errorf("console: tokens file: %w", err)
	}
	if runtime.GOOS != "windows" && fi.Mode().Perm()&0o077 != 0 {
		return nil, fmt.Errorf("console: tokens file %s can be read by group or others (mode %v); make it private: chmod 600 %s", path, fi.Mode().Perm(), path)
	}
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("console: tokens file: %w", err)
	}
	defer f.Close()
	var users []user
	sc := bufio.NewScanner(f)
	line := 0
	for sc.Scan() {
		line++
		text := strings.TrimSpace(sc.Text())
		if text == "" || strings.HasPrefix(text, "#") {
			continue
		}
		fields := strings.Fields(text)
		if len(fields) < 3 {
			return nil, fmt.Errorf("console: %s:%d: want TOKEN USER-ID PRINTED NAME", path, line)
		}
		if len(fields[0]) < minTokenLen {
			return nil, fmt.Errorf("console: %s:%d: the token is shorter than %d characters", path, line, minTokenLen)
		}
		users = append(users, user{ID: fields[1], Name: strings.Join(fields[2:], " "), digest: sha256.Sum256([]byte(fields[0]))})
	}
	if err := sc.Err(); err != nil {
		return nil, fmt.Errorf("console: %s: %w", path, err)
	}
	if len(users) == 0 {
		return nil, fmt.Errorf("console: %s holds no tokens", path)
	}
	return users, nil
}

// match finds the user of a token. Every user's digest is compared, in
// constant time, so the time taken says nothing about which one matched.
func match(users []user, token string) *user {
	d := sha256.Sum256([]byte(token))
	var found *user
	for i := range users {
		if subtle.ConstantTimeCompare(d[:], users[i].digest[:]) == 1 {
			found = &users[i]
		}
	}
	return found
}

// sessions are the signed-in browsers, by a random id kept in a cookie.
type sessions struct {
	mu  sync.Mutex
	key []byte // HMAC key for form tokens, new at every start
	by  map[string]session
	ttl time.Duration
}

type session struct {
	user    *user
	expires time.Time
}

func newSessions(ttl time.Duration) *sessions {
	return &sessions{key: randomBytes(32), by: map[string]session{}, ttl: ttl}
}

func randomBytes(n int) []byte {
	b := make([]byte, n)
	if _, err := rand.Read(b); err != nil {
		panic(fmt.Sprintf("console: no randomness: %v", err)) // crypto/rand never fails on supported systems
	}
	return b
}

func randomID() string { return hex.EncodeToString(randomBytes(32)) }

// start signs a user in under a new id.
func (s *sessions) start(u *user, now time.Time) string {
	id := randomID()
	s.mu.Lock()
	defer s.mu.Unlock()
	for k, v := range s.by {
		if now.After(v.expires) {
			delete(s.by, k)
		}
	}
	s.by[id] = session{user: u, expires: now.Add(s.ttl)}
	return id
}

// lookup returns the user signed in under id, or nil.
func (s *sessions) lookup(id string, now time.Time) *user {
	s.mu.Lock()
	defer s.mu.Unlock()
	v, ok := s.by[id]
	if !ok || now.After(v.expires) {
		return nil
	}
	return v.user
}

func (s *sessions) end(id string) {
	s.mu.Lock()
	defer s.mu.Unlock()
	delete(s.by, id)
}

// formToken binds a form to the browser's client id: HMAC-SHA256 under a
// key that lives only in this process.
func (s *sessions) formToken(client string) string {
	m := hmac.New(sha256.New, s.key)
	m.Write([]byte("form\x00" + client))
	return hex.EncodeToString(m.Sum(nil))
}

func (s *sessions) validForm(client, token string) bool {
	if client == "" || token == "" {
		return false
	}
	want := s.formToken(client)
	return subtle.ConstantTimeCompare([]byte(want), []byte(token)) == 1
}
