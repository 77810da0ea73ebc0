package store

import (
	"context"
	"crypto/rand"
	"crypto/sha256"
	"database/sql"
	"encoding/hex"
	"errors"
	"fmt"
	"strings"
	"sync"

	"golang.org/x/crypto/bcrypt"
)

// ErrBadLogin is returned for a wrong name or password alike, so a login form cannot tell which.
var ErrBadLogin = errors.New("wrong name or password")

// Roles in increasing order of what they may do: readers read; contributors add and edit drafts and
// import; curators accept, reject and edit anything; admins also manage users and settings.
const (
	RoleReader      = "reader"
	RoleContributor = "contributor"
	RoleCurator     = "curator"
	RoleAdmin       = "admin"
)

// Roles lists the roles, least first.
func Roles() []string { return []string{RoleReader, RoleContributor, RoleCurator, RoleAdmin} }

// RoleAtLeast reports whether role grants at least what min grants.
func RoleAtLeast(role, min string) bool {
	rank := func(r string) int {
		for i, x := range Roles() {
			if x == r {
				return i
			}
		}
		return -1
	}
	return rank(role) >= rank(min) && rank(min) >= 0
}

// MinPasswordLength is the shortest password accepted, in characters.
const MinPasswordLength = 10

// MaxPasswordBytes is the longest password accepted, in bytes of UTF-8: bcrypt uses only the first 72
// (golang.org/x/crypto/bcrypt refuses longer ones). A plain Latin letter takes one byte; accented letters
// and those of other scripts two to four.
const MaxPasswordBytes = 72

// PasswordRule says what a password must be, for forms.
func PasswordRule() string {
	return fmt.Sprintf("at least %d characters and at most %d bytes (%d plain letters, digits or signs; an accented letter or a letter of another script counts as two to four)",
		MinPasswordLength, MaxPasswordBytes, MaxPasswordBytes)
}

// User is an account.
type User struct {
	ID        int64  `json:"id"`
	Name      string `json:"name"`
	Role      string `json:"role"`
	Disabled  bool   `json:"disabled"`
	CreatedAt string `json:"created_at"`
}

// SetPasswordCost sets the bcrypt cost of new password hashes (tests use bcrypt.MinCost).
func (d *DB) SetPasswordCost(cost int) { d.bcryptCost = cost }

func (d *DB) cost() int {
	if d.bcryptCost == 0 {
		return bcrypt.DefaultCost
	}
	return d.bcryptCost
}

// CreateUser adds an account. The password is stored only as a bcrypt hash.
func (d *DB) CreateUser(ctx context.Context, name, role, password string) (User, error) {
	name = strings.TrimSpace(name)
	var problems []Problem
	if name == "" || strings.ContainsAny(name, " \t\n") {
		problems = append(problems, Problem{Column: "name", Message: "want a name without spaces"})
	}
	if !RoleAtLeast(role, RoleReader) {
		problems = append(problems, Problem{Column: "role", Message: "want one of " + strings.Join(Roles(), ", ")})
	}
	if n := len([]rune(password)); n < MinPasswordLength {
		problems = append(problems, Problem{Column: "password", Message: fmt.Sprintf("want at least %d characters", MinPasswordLength)})
	} else if len(password) > MaxPasswordBytes {
		problems = append(problems, Problem{Column: "password", Message: fmt.Sprintf("want at most %d bytes; this one has %d characters taking %d bytes (%s)",
			MaxPasswordBytes, n, len(password), PasswordRule())})
	}
	if len(problems) > 0 {
		return User{}, &ValidationError{problems}
	}
	hash, err := bcrypt.GenerateFromPassword([]byte(password), d.cost())
	if err != nil {
		return User{}, fmt.Errorf("create user: %w", err)
	}
	u := User{Name: name, Role: role, CreatedAt: d.stamp()}
	err = d.inTx(ctx, func(tx *sql.Tx) error {
		if id, err := lookupID(ctx, tx, `SELECT id FROM users WHERE name = ?`, name); err != nil {
			return err
		} else if id != 0 {
			return &ValidationError{[]Problem{{Column: "name", Message: fmt.Sprintf("%q is taken", name)}}}
		}
		r, err := tx.ExecContext(ctx, `INSERT INTO users (name, role, password_hash, created_at) VALUES (?, ?, ?, ?)`,
			u.Name, u.Role, string(hash), u.CreatedAt)
		if err != nil {
			return err
		}
		u.ID, _ = r.LastInsertId()
		batch, err := d.newBatch(ctx, tx, "add user", "")
		if err != nil {
			return err
		}
		return addRevision(ctx, tx, batch, "user", u.ID, nil, u)
	})
	if err != nil {
		if _, ok := AsValidation(err); ok {
			return User{}, err
		}
		return User{}, fmt.Errorf("create user: %w", err)
	}
	return u, nil
}

// dummyHash is compared against when a name is unknown, so both failures take about the same time.
var dummyHash = sync.OnceValue(func() []byte {
	h, _ := bcrypt.GenerateFromPassword([]byte("not a real password at all"), bcrypt.DefaultCost)
	return h
})

// Authenticate returns the enabled user with this name and password, or ErrBadLogin.
func (d *DB) Authenticate(ctx context.Context, name, password string) (User, error) {
	var u User
	var hash string
	err := d.reader().QueryRowContext(ctx, `SELECT id, name, role, disabled, created_at, password_hash FROM users WHERE name = ?`,
		strings.TrimSpace(name)).Scan(&u.ID, &u.Name, &u.Role, &u.Disabled, &u.CreatedAt, &hash)
	if errors.Is(err, sql.ErrNoRows) {
		bcrypt.CompareHashAndPassword(dummyHash(), []byte(password))
		return User{}, ErrBadLogin
	}
	if err != nil {
		return User{}, fmt.Errorf("authenticate: %w", err)
	}
	if bcrypt.CompareHashAndPassword([]byte(hash), []byte(password)) != nil || u.Disabled {
		return User{}, ErrBadLogin
	}
	return u, nil
}

// UserByID returns one user, or ErrNotFound.
func (d *DB) UserByID(ctx context.Context, id int64) (User, error) {
	var u User
	err := d.reader().QueryRowContext(ctx, `SELECT id, name, role, disabled, created_at FROM users WHERE id = ?`, id).
		Scan(&u.ID, &u.Name, &u.Role, &u.Disabled, &u.CreatedAt)
	return u, notFound(err, "user", id)
}

// Users returns every account by name.
func (d *DB) Users(ctx context.Context) ([]User, error) {
	return queryAll(ctx, d.reader(), `SELECT id, name, role, disabled, created_at FROM users ORDER BY name`, nil,
		func(r interface{ Scan(...any) error }) (User, error) {
			var u User
			return u, r.Scan(&u.ID, &u.Name, &u.Role, &u.Disabled, &u.CreatedAt)
		})
}

func tokenHash(token string) string {
	h := sha256.Sum256([]byte(token))
	return hex.EncodeToString(h[:])
}

// CreateToken makes a personal access token for a user and returns it; only its hash is stored, so it
// cannot be shown again.
func (d *DB) CreateToken(ctx context.Context, userID int64, name string) (string, error) {
	if strings.TrimSpace(name) == "" {
		return "", &ValidationError{[]Problem{{Column: "name", Message: "give the token a name (what script uses it)"}}}
	}
	b := make([]byte, 24)
	if _, err := rand.Read(b); err != nil {
		return "", err
	}
	token := "coeval_" + hex.EncodeToString(b)
	_, err := d.db.ExecContext(ctx, `INSERT INTO api_tokens (user_id, name, token_hash, created_at) VALUES (?, ?, ?, ?)`,
		userID, strings.TrimSpace(name), tokenHash(token), d.stamp())
	if err != nil {
		return "", fmt.Errorf("create token: %w", err)
	}
	return token, nil
}

// UserByToken returns the enabled user of a valid, unrevoked token, or ErrBadLogin.
func (d *DB) UserByToken(ctx context.Context, token string) (User, error) {
	var u User
	var tid int64
	err := d.reader().QueryRowContext(ctx, `SELECT u.id, u.name, u.role, u.disabled, u.created_at, t.id FROM api_tokens t
		JOIN users u ON u.id = t.user_id WHERE t.token_hash = ? AND t.revoked_at IS NULL`, tokenHash(token)).
		Scan(&u.ID, &u.Name, &u.Role, &u.Disabled, &u.CreatedAt, &tid)
	if errors.Is(err, sql.ErrNoRows) || (err == nil && u.Disabled) {
		return User{}, ErrBadLogin
	}
	if err != nil {
		return User{}, fmt.Errorf("token: %w", err)
	}
	d.db.ExecContext(ctx, `UPDATE api_tokens SET last_used_at = ? WHERE id = ?`, d.stamp(), tid)
	return u, nil
}

// RevokeToken revokes one of a user's tokens.
func (d *DB) RevokeToken(ctx context.Context, userID, tokenID int64) error {
	r, err := d.db.ExecContext(ctx, `UPDATE api_tokens SET revoked_at = ? WHERE id = ? AND user_id = ? AND revoked_at IS NULL`,
		d.stamp(), tokenID, userID)
	if err != nil {
		return fmt.Errorf("revoke token: %w", err)
	}
	if n, _ := r.RowsAffected(); n == 0 {
		return fmt.Errorf("token %d: %w", tokenID, ErrNotFound)
	}
	return nil
}

// RecordAuthor returns the id of the account that added a record (the account of the change that
// created it: a form, an upload or an import), or 0 when none did (command line, demo seeding).
func (d *DB) RecordAuthor(ctx context.Context, recordType string, id int64) (int64, error) {
	var uid sql.NullInt64
	err := d.reader().QueryRowContext(ctx, `SELECT b.user_id FROM revisions r JOIN change_batches b ON b.id = r.batch_id
		WHERE r.record_type = ? AND r.record_id = ? AND r.before_json IS NULL ORDER BY r.id LIMIT 1`, recordType, id).Scan(&uid)
	if errors.Is(err, sql.ErrNoRows) {
		return 0, nil
	}
	if err != nil {
		return 0, fmt.Errorf("author of %s %d: %w", recordType, id, err)
	}
	return uid.Int64, nil
}

// SQL returns the underlying *sql.DB for components that keep their own tables in it (the session store).
func (d *DB) SQL() *sql.DB { return d.db }

// Token is a personal access token as listed to its owner (never the token itself).
type Token struct {
	ID         int64   `json:"id"`
	Name       string  `json:"name"`
	CreatedAt  string  `json:"created_at"`
	LastUsedAt *string `json:"last_used_at"`
	RevokedAt  *string `json:"revoked_at"`
}

// Tokens lists a user's tokens, newest first.
func (d *DB) Tokens(ctx context.Context, userID int64) ([]Token, error) {
	return queryAll(ctx, d.reader(), `SELECT id, name, created_at, last_used_at, revoked_at FROM api_tokens WHERE user_id = ? ORDER BY id DESC`,
		[]any{userID}, func(r interface{ Scan(...any) error }) (Token, error) {
			var t Token
			return t, r.Scan(&t.ID, &t.Name, &t.CreatedAt, &t.LastUsedAt, &t.RevokedAt)
		})
}
