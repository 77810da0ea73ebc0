package store

import (
	"context"
	"database/sql"
	"fmt"
	"strings"

	"golang.org/x/crypto/bcrypt"
)

// AccountChange is what an admin changes on an account: its role, whether it may sign in, and (when
// Password is not empty) a new password.
type AccountChange struct {
	Role     string
	Disabled bool
	Password string
}

// passwordProblems checks a password against the rule of every account.
func passwordProblems(password string) []Problem {
	if n := len([]rune(password)); n < MinPasswordLength {
		return []Problem{{Column: "password", Message: fmt.Sprintf("want at least %d characters", MinPasswordLength)}}
	} else if len(password) > MaxPasswordBytes {
		return []Problem{{Column: "password", Message: fmt.Sprintf("want at most %d bytes; this one has %d characters taking %d bytes (%s)",
			MaxPasswordBytes, n, len(password), PasswordRule())}}
	}
	return nil
}

// UpdateAccount changes an account as an admin: its role, whether it is disabled, and its password when a
// new one is given. A disabled account cannot sign in and its access tokens are revoked; its sessions stop
// at their next request. The last enabled admin can be neither demoted nor disabled, so the compilation is
// never left without one. The change is recorded like any other (without the password).
func (d *DB) UpdateAccount(ctx context.Context, id int64, c AccountChange) (User, error) {
	var problems []Problem
	if !RoleAtLeast(c.Role, RoleReader) {
		problems = append(problems, Problem{Column: "role", Message: "want one of " + strings.Join(Roles(), ", ")})
	}
	var hash []byte
	if c.Password != "" {
		if problems = append(problems, passwordProblems(c.Password)...); len(problems) == 0 {
			var err error
			if hash, err = bcrypt.GenerateFromPassword([]byte(c.Password), d.cost()); err != nil {
				return User{}, fmt.Errorf("account: %w", err)
			}
		}
	}
	if len(problems) > 0 {
		return User{}, &ValidationError{problems}
	}
	var after User
	err := d.inTx(ctx, func(tx *sql.Tx) error {
		var before User
		err := tx.QueryRowContext(ctx, `SELECT id, name, role, disabled, created_at FROM users WHERE id = ?`, id).
			Scan(&before.ID, &before.Name, &before.Role, &before.Disabled, &before.CreatedAt)
		if err != nil {
			return notFound(err, "user", id)
		}
		losesAdmin := before.Role == RoleAdmin && !before.Disabled && (c.Role != RoleAdmin || c.Disabled)
		if losesAdmin {
			var admins int
			if err := tx.QueryRowContext(ctx, `SELECT count(*) FROM users WHERE role = 'admin' AND disabled = 0`).Scan(&admins); err != nil {
				return err
			}
			if admins <= 1 {
				return &ValidationError{[]Problem{{Column: "role", Message: before.Name + " is the only enabled admin: make another account admin first, so the compilation keeps one"}}}
			}
		}
		after = before
		after.Role, after.Disabled = c.Role, c.Disabled
		if _, err := tx.ExecContext(ctx, `UPDATE users SET role = ?, disabled = ? WHERE id = ?`, after.Role, after.Disabled, id); err != nil {
			return err
		}
		if hash != nil {
			if _, err := tx.ExecContext(ctx, `UPDATE users SET password_hash = ? WHERE id = ?`, string(hash), id); err != nil {
				return err
			}
		}
		if after.Disabled {
			if _, err := tx.ExecContext(ctx, `UPDATE api_tokens SET revoked_at = ? WHERE user_id = ? AND revoked_at IS NULL`, d.stamp(), id); err != nil {
				return err
			}
		}
		what := "change account"
		if hash != nil {
			what = "change account and set a new password"
		}
		batch, err := d.newBatch(ctx, tx, what, "")
		if err != nil {
			return err
		}
		return addRevision(ctx, tx, batch, "user", id, before, after)
	})
	if err != nil {
		if _, ok := AsValidation(err); ok {
			return User{}, err
		}
		return User{}, fmt.Errorf("account %d: %w", id, err)
	}
	return after, nil
}
