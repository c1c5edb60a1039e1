package main

import (
	"context"
	"errors"
	"fmt"
	"path/filepath"
	"strconv"

	"ebb/demo"
)

func demoCommand() command {
	return command{
		name:    "demo",
		summary: "write the invented demo business (Larkspur Refills) as CSV files",
		detail: `
Writes DIR/orders.csv (customer_id,order_date,amount,order_id),
DIR/customers.csv (customer_id,email,signup_date,contactable,channel,
first_line,region) and DIR/truth.csv (each customer's true order rate and
dropout date, for checking models). The same seed always gives the same
files. All data is invented; e-mail addresses use the reserved example.com.`,
		setup: func(f *flags) func(context.Context, env, []string) error {
			var out, seed string
			var size int
			f.String(&out, "out", "", "DIR", "folder to write the files into (created if missing)")
			f.String(&seed, "seed", strconv.FormatUint(demo.DefaultSeed, 10), "N", "random seed; the same seed gives the same business")
			f.Int(&size, "size", demo.DefaultCustomers, "N", "number of customers")
			return func(ctx context.Context, e env, args []string) error {
				if out == "" {
					return errors.New("demo: --out DIR is required")
				}
				if len(args) > 0 {
					return fmt.Errorf("demo: unexpected argument %q", args[0])
				}
				s, err := strconv.ParseUint(seed, 10, 64)
				if err != nil {
					return fmt.Errorf("demo: --seed %q is not a whole number", seed)
				}
				if size < 1 || size > 10_000_000 {
					return fmt.Errorf("demo: --size %d is out of range (1 to 10000000 customers)", size)
				}
				if err := demo.WriteDir(out, demo.Options{Seed: s, Customers: size}); err != nil {
					return fmt.Errorf("demo: %w", err)
				}
				fmt.Fprintf(e.stdout, "wrote %s, %s and %s\n", filepath.Join(out, demo.OrdersFile),
					filepath.Join(out, demo.CustomersFile), filepath.Join(out, demo.TruthFile))
				return nil
			}
		},
	}
}
