package ingest

import (
	"context"
	"errors"
	"strings"
	"testing"
)

func TestReadCustomers(t *testing.T) {
	keys := NewKeys([]string{"OLD"})
	cs, sum, err := ReadCustomers(context.Background(), strings.NewReader(
		"customer_id,email,signup_date,contactable,Channel,region\n"+
			"OLD,old@example.com,2023-01-02,true,search,north\n"+
			"N1,,,no,social,\n"+
			"N2,n2@example.com,2024-05-06,,referral,south\n"),
		CustomerOptions{File: "customers.csv", Keys: keys, Today: today})
	if err != nil {
		t.Fatal(err)
	}
	if got := strings.Join(sum.Attributes, ","); got != "channel,region" {
		t.Errorf("Attributes = %q, want channel,region", got)
	}
	if len(cs) != 3 || sum.NonContact != 1 || keys.Len() != 3 {
		t.Fatalf("customers, non-contactable, keys = %d, %d, %d; want 3, 1, 3", len(cs), sum.NonContact, keys.Len())
	}
	if c := cs[0]; c.ID != 0 || c.Email != "old@example.com" || c.Signup.String() != "2023-01-02" || !c.Contactable {
		t.Errorf("OLD = %+v", c)
	}
	if c := cs[1]; c.ID != 1 || c.Contactable || c.HasSignup || c.Attributes[0] != "social" || c.Attributes[1] != "" {
		t.Errorf("N1 = %+v", c)
	}
	if c := cs[2]; c.ID != 2 || !c.Contactable {
		t.Errorf("N2 = %+v (empty contactable means true)", c)
	}
}

func TestReadCustomersRejects(t *testing.T) {
	const head = "customer_id,email,signup_date,contactable\n"
	tests := []struct {
		name, input, want string
	}{
		{"empty", "", "customers.csv:1:0: the file is empty"},
		{"wrong header", "id,email,signup_date,contactable\nA,,,\n", `customers.csv:1:1: column 1 is "id" but must be "customer_id"`},
		{"bad contactable", head + "A,,,maybe\n", `customers.csv:2:4: column contactable: "maybe" is not true or false`},
		{"bad email", head + "A,not-an-address,,\n", `customers.csv:2:2: column email: "not-an-address" is not an email address`},
		{"bad signup", head + "A,,14/03/2024,\n", `customers.csv:2:3: column signup_date: "14/03/2024" is not a date (want YYYY-MM-DD)`},
		{"future signup", head + "A,,2027-01-01,\n", `customers.csv:2:3: column signup_date: "2027-01-01" is after today`},
		{"duplicate", head + "A,,,\nA,,,\n", `customers.csv:3:1: column customer_id: customer "A" already appears on line 2`},
		{"header only", head, "customers.csv:2:0: the file has a header but no customers"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			_, _, err := ReadCustomers(context.Background(), strings.NewReader(tt.input),
				CustomerOptions{File: "customers.csv", Keys: NewKeys(nil), Today: today})
			var rej *Rejected
			if !errors.As(err, &rej) || len(rej.Problems) == 0 {
				t.Fatalf("err = %v, want *Rejected", err)
			}
			if got := rej.Problems[0].String(); !strings.HasPrefix(got, tt.want) {
				t.Errorf("problem = %q, want prefix %q", got, tt.want)
			}
		})
	}
}
