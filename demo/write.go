package demo

import (
	"bufio"
	"encoding/csv"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strconv"
	"strings"
)

// CSV headers, exactly as ebb's importer expects them.
var (
	ordersHeader    = []string{"customer_id", "order_date", "amount", "order_id"}
	customersHeader = []string{"customer_id", "email", "signup_date", "contactable", "channel", "first_line", "region"}
	truthHeader     = []string{"customer_id", "rate_per_year", "dropout_date", "active_at_end"}
)

// File names written by WriteDir.
const (
	OrdersFile    = "orders.csv"
	CustomersFile = "customers.csv"
	TruthFile     = "truth.csv"
)

const dateLayout = "2006-01-02"

func customerKey(i int) string { return fmt.Sprintf("C%05d", i+1) }
func orderID(n int) string     { return fmt.Sprintf("LR-%07d", n) }

// emailFor gives an address on example.com, which RFC 2606 reserves, so the
// demo can never mail a real person.
func emailFor(key string) string { return strings.ToLower(key) + "@example.com" }

func formatAmount(a float64) string { return strconv.FormatFloat(a, 'f', 2, 64) }

// WriteOrders writes orders.csv: customer_id,order_date,amount,order_id.
func (b Business) WriteOrders(w io.Writer) error {
	cw := csv.NewWriter(w)
	if err := cw.Write(ordersHeader); err != nil {
		return err
	}
	for _, o := range b.Orders {
		rec := []string{o.CustomerKey, o.Date.Format(dateLayout), formatAmount(o.Amount), o.ID}
		if err := cw.Write(rec); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}

// WriteCustomers writes customers.csv:
// customer_id,email,signup_date,contactable,channel,first_line,region.
func (b Business) WriteCustomers(w io.Writer) error {
	cw := csv.NewWriter(w)
	if err := cw.Write(customersHeader); err != nil {
		return err
	}
	for _, c := range b.Customers {
		rec := []string{c.Key, c.Email, c.Signup.Format(dateLayout), strconv.FormatBool(c.Contactable), c.Channel, c.FirstLine, c.Region}
		if err := cw.Write(rec); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}

// WriteTruth writes truth.csv: customer_id,rate_per_year,dropout_date,active_at_end.
// rate_per_year has 4 decimals (orders per year); dropout_date is empty when
// the customer was still active at End.
func (b Business) WriteTruth(w io.Writer) error {
	cw := csv.NewWriter(w)
	if err := cw.Write(truthHeader); err != nil {
		return err
	}
	for _, c := range b.Customers {
		drop := ""
		if !c.DropoutDay.IsZero() {
			drop = c.DropoutDay.Format(dateLayout)
		}
		rec := []string{c.Key, strconv.FormatFloat(c.RatePerYear, 'f', 4, 64), drop, strconv.FormatBool(c.DropoutDay.IsZero())}
		if err := cw.Write(rec); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}

// WriteDir generates the business and writes orders.csv, customers.csv and
// truth.csv into dir, creating it if needed. Each file is written to a
// temporary file in dir and renamed into place, so a reader never sees a
// half-written file.
func WriteDir(dir string, opt Options) error {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	b := Generate(opt)
	files := []struct {
		name  string
		write func(io.Writer) error
	}{
		{OrdersFile, b.WriteOrders},
		{CustomersFile, b.WriteCustomers},
		{TruthFile, b.WriteTruth},
	}
	for _, f := range files {
		if err := writeAtomic(filepath.Join(dir, f.name), f.write); err != nil {
			return err
		}
	}
	return nil
}

// writeAtomic writes path via a temporary file in the same directory (so the
// rename stays on one file system) and renames it into place.
func writeAtomic(path string, write func(io.Writer) error) (err error) {
	tmp, err := os.CreateTemp(filepath.Dir(path), "."+filepath.Base(path)+".tmp-*")
	if err != nil {
		return err
	}
	defer func() {
		if err != nil {
			tmp.Close()
			os.Remove(tmp.Name())
		}
	}()
	bw := bufio.NewWriter(tmp)
	if err = write(bw); err != nil {
		return fmt.Errorf("demo: writing %s: %w", filepath.Base(path), err)
	}
	if err = bw.Flush(); err != nil {
		return err
	}
	// CreateTemp makes the file private; these are ordinary data files.
	if err = tmp.Chmod(0o644); err != nil {
		return err
	}
	if err = tmp.Sync(); err != nil {
		return err
	}
	if err = tmp.Close(); err != nil {
		return err
	}
	return os.Rename(tmp.Name(), path)
}
