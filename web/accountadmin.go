package web

import (
	"fmt"
	"net/http"

	"coeval/store"
	"coeval/views"
)

// An admin's page of one account: its role, whether it may sign in, and a new password.

func (s *Server) accountEditView(r *http.Request, u store.User, c store.AccountChange, problems []store.Problem) views.Edit {
	e := views.Edit{Page: s.page(r.Context(), "Account "+u.Name, ""), Action: fmt.Sprintf("/admin/users/%d", u.ID), Submit: "Save the account"}
	e.Crumbs = []views.Link{{Label: "Administration", URL: "/admin"}}
	e.Intro = "Change the account's role, stop it from signing in (its access tokens are revoked and it is signed out at its next page), or give it a new password to pass on. The compilation always keeps at least one enabled admin."
	byField := map[string]string{}
	for _, p := range problems {
		byField[p.Column] = p.Message
	}
	var roles []views.Option
	for _, ro := range store.Roles() {
		roles = append(roles, views.Option{Value: ro, Label: ro, Selected: ro == c.Role})
	}
	status := []views.Option{{Value: "enabled", Label: "may sign in", Selected: !c.Disabled}, {Value: "disabled", Label: "disabled: cannot sign in", Selected: c.Disabled}}
	e.Inputs = []views.Input{
		{Name: "role", Label: "Role", Kind: "select", Options: roles, Error: byField["role"]},
		{Name: "status", Label: "Signing in", Kind: "select", Options: status},
		{Name: "password", Label: "New password", Kind: "password", Help: "leave empty to keep the present one; " + store.PasswordRule(), Error: byField["password"]},
	}
	return e
}

func (s *Server) handleAccountEdit(w http.ResponseWriter, r *http.Request) error {
	id, err := pathID(r, "id")
	if err != nil {
		return err
	}
	u, err := s.store.UserByID(r.Context(), id)
	if err != nil {
		return notFoundError{what: fmt.Sprintf("account %d", id)}
	}
	s.render(w, r, http.StatusOK, views.EditPage(s.accountEditView(r, u, store.AccountChange{Role: u.Role, Disabled: u.Disabled}, nil)))
	return nil
}

func (s *Server) handleAccountUpdate(w http.ResponseWriter, r *http.Request) error {
	r = actingCtx(r)
	id, err := pathID(r, "id")
	if err != nil {
		return err
	}
	u, err := s.store.UserByID(r.Context(), id)
	if err != nil {
		return notFoundError{what: fmt.Sprintf("account %d", id)}
	}
	status := r.PostFormValue("status")
	if status != "enabled" && status != "disabled" {
		return badRequest{message: "The form has a problem:", problems: []string{"status: want enabled or disabled"}}
	}
	c := store.AccountChange{Role: r.PostFormValue("role"), Disabled: status == "disabled", Password: r.PostFormValue("password")}
	_, err = s.store.UpdateAccount(r.Context(), id, c)
	if ve, ok := store.AsValidation(err); ok {
		c.Password = ""
		s.render(w, r, http.StatusUnprocessableEntity, views.EditPage(s.accountEditView(r, u, c, ve.Problems)))
		return nil
	}
	if err != nil {
		return err
	}
	http.Redirect(w, r, "/admin", http.StatusSeeOther)
	return nil
}
