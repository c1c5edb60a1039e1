package web

import (
	"fmt"
	"net/http"
	"net/url"
	"strconv"

	"ebb/internal/problem"
	"ebb/web/views"
)

func (s *Server) tokensView(w http.ResponseWriter, r *http.Request) (views.TokensView, error) {
	v := views.TokensView{Chrome: s.chrome(w, r, "API tokens", "tokens")}
	ds, err := s.store.Datasets(r.Context())
	if err != nil {
		return v, err
	}
	for _, d := range ds {
		v.Datasets = append(v.Datasets, views.Option{Value: strconv.FormatInt(d.ID, 10), Label: d.Name})
	}
	ts, err := s.tokens.Store.Tokens(r.Context())
	if err != nil {
		return v, err
	}
	stamp := "2006-01-02 15:04 UTC"
	for _, t := range ts {
		line := views.TokenLine{ID: t.ID, Name: t.Name, Dataset: t.DatasetName, Prefix: t.Prefix, Created: t.CreatedAt.UTC().Format(stamp) + " by " + t.CreatedBy,
			LastUsed: "never"}
		if !t.LastUsedAt.IsZero() {
			line.LastUsed = t.LastUsedAt.UTC().Format(stamp)
		}
		if t.Revoked() {
			line.Revoked = t.RevokedAt.UTC().Format(stamp)
		}
		v.Tokens = append(v.Tokens, line)
	}
	return v, nil
}

func (s *Server) handleTokens(w http.ResponseWriter, r *http.Request) {
	v, err := s.tokensView(w, r)
	if err != nil {
		s.fail(w, r, err)
		return
	}
	s.render(w, r, http.StatusOK, views.TokensPage(v))
}

// handleTokenCreate creates a token and shows it on the page this once
// (not through a redirect: the token must not sit in a session).
func (s *Server) handleTokenCreate(w http.ResponseWriter, r *http.Request) {
	u, _ := currentUser(r)
	id, _ := strconv.ParseInt(r.PostFormValue("dataset"), 10, 64)
	d, err := s.store.DatasetByID(r.Context(), id)
	var plain string
	if err == nil {
		plain, _, err = s.tokens.Create(r.Context(), d.ID, r.PostFormValue("name"), u.Name)
	}
	v, verr := s.tokensView(w, r)
	if verr != nil {
		s.fail(w, r, verr)
		return
	}
	if err != nil {
		p := problem.As(err)
		if p == nil {
			s.fail(w, r, err)
			return
		}
		v.Error, v.Name = p.Message, r.PostFormValue("name")
		s.render(w, r, http.StatusUnprocessableEntity, views.TokensPage(v))
		return
	}
	v.New, v.NewDataset = plain, d.Name
	v.CurlExample = fmt.Sprintf("curl -fsS -H 'Authorization: Bearer %s' -o latest.csv %s/api/v1/datasets/%s/lists/latest.csv",
		plain, baseURL(r), url.PathEscape(d.Name))
	s.render(w, r, http.StatusOK, views.TokensPage(v))
}

func (s *Server) handleTokenRevoke(w http.ResponseWriter, r *http.Request) {
	id, err := idParam(r, "id")
	if err == nil {
		err = s.tokens.Revoke(r.Context(), id)
	}
	if err != nil {
		s.fail(w, r, err)
		return
	}
	s.flash(w, r, "The token is revoked; it is refused from now on.")
	seeOther(w, r, "/admin/tokens")
}

// baseURL is the address the request came to, for examples on pages.
func baseURL(r *http.Request) string {
	scheme := "http"
	if r.TLS != nil {
		scheme = "https"
	}
	return scheme + "://" + r.Host
}
