package store

import (
	"context"
	"errors"
	"strings"
	"testing"
)

// An admin changes a role, disables an account (it can no longer sign in, its tokens stop), sets a new
// password (the old one stops working), and cannot leave the compilation without an enabled admin.
func TestUpdateAccount(t *testing.T) {
	ctx := context.Background()
	db := mustOpenDB(t)
	admin, err := db.CreateUser(ctx, "first-admin", RoleAdmin, "a long admin password")
	if err != nil {
		t.Fatal(err)
	}
	u, err := db.CreateUser(ctx, "someone", RoleContributor, "a long user password")
	if err != nil {
		t.Fatal(err)
	}
	token, err := db.CreateToken(ctx, u.ID, "script")
	if err != nil {
		t.Fatal(err)
	}
	if got, err := db.UpdateAccount(ctx, u.ID, AccountChange{Role: RoleCurator}); err != nil || got.Role != RoleCurator {
		t.Fatalf("role change: %+v, %v", got, err)
	}
	if got, _ := db.UserByID(ctx, u.ID); got.Role != RoleCurator {
		t.Errorf("stored role %q, want curator", got.Role)
	}
	// Disabled: no sign-in, no token.
	if _, err := db.UpdateAccount(ctx, u.ID, AccountChange{Role: RoleCurator, Disabled: true}); err != nil {
		t.Fatal(err)
	}
	if _, err := db.Authenticate(ctx, "someone", "a long user password"); !errors.Is(err, ErrBadLogin) {
		t.Errorf("a disabled account signed in: %v", err)
	}
	if _, err := db.UserByToken(ctx, token); err == nil {
		t.Error("a disabled account's token still works")
	}
	// A new password while enabling it again: the old one stops working.
	if _, err := db.UpdateAccount(ctx, u.ID, AccountChange{Role: RoleCurator, Password: "a brand new password"}); err != nil {
		t.Fatal(err)
	}
	if _, err := db.Authenticate(ctx, "someone", "a long user password"); !errors.Is(err, ErrBadLogin) {
		t.Error("the old password still works after a reset")
	}
	if _, err := db.Authenticate(ctx, "someone", "a brand new password"); err != nil {
		t.Errorf("the new password does not work: %v", err)
	}
	// The only enabled admin can be neither demoted nor disabled.
	for _, c := range []AccountChange{{Role: RoleCurator}, {Role: RoleAdmin, Disabled: true}} {
		_, err := db.UpdateAccount(ctx, admin.ID, c)
		ve, ok := AsValidation(err)
		if !ok || !strings.Contains(ve.Problems[0].Message, "only enabled admin") {
			t.Errorf("%+v on the only admin: %v", c, err)
		}
	}
	if _, err := db.UpdateAccount(ctx, u.ID, AccountChange{Role: RoleAdmin}); err != nil {
		t.Fatal(err)
	}
	if _, err := db.UpdateAccount(ctx, admin.ID, AccountChange{Role: RoleReader}); err != nil {
		t.Errorf("with a second admin, the first may be demoted: %v", err)
	}
	// Bad input names its field.
	_, err = db.UpdateAccount(ctx, u.ID, AccountChange{Role: "boss", Password: "short"})
	ve, ok := AsValidation(err)
	if !ok || len(ve.Problems) != 2 || ve.Problems[0].Column != "role" || ve.Problems[1].Column != "password" {
		t.Errorf("bad role and password: %v", err)
	}
	if _, err := db.UpdateAccount(ctx, 999, AccountChange{Role: RoleReader}); !errors.Is(err, ErrNotFound) {
		t.Errorf("unknown account: %v", err)
	}
}
