package store

import (
	"context"
	"database/sql/driver"
	"fmt"

	"ebb/internal/civil"
	"ebb/internal/history"
	"ebb/internal/problem"
)

// LoadHistory reads the order history of the dataset of version versionID
// as of that version: the orders of the dataset's ready versions with a seq
// up to its own, plus the version itself (which may still be loading), the
// same versions ComputeVersionStats reads. Customers are those the included
// versions added, indexed by their dense ids (0 to the largest such id);
// those without orders have no order days.
//
// DataThrough is the dataset's data_through when the analyst set one (the
// setting as it is now, whichever version is read), otherwise the latest
// order day read — for a ready version the same day as its last_day, and
// for a loading one, whose last_day is not written yet, still right. It is
// the zero Date for a version without orders and without a setting.
//
// A version that does not exist is a problem.NotFound. All reads run in one
// read transaction; the orders are read by one rowid range scan per
// version straight from the driver, like ComputeVersionStats (PLATFORM.md
// §1: database/sql's Scan costs about 1 µs a row, and a sorted read
// through an index is slower than sorting in Go), and grouped by customer
// in history.Builder.
func (s *Store) LoadHistory(ctx context.Context, versionID int64) (*history.History, error) {
	var h *history.History
	err := s.readRaw(ctx, func(q driver.ConnPrepareContext) error {
		var err error
		h, err = loadHistory(ctx, q, versionID)
		return err
	})
	if err != nil {
		if problem.As(err) != nil {
			return nil, err
		}
		return nil, fmt.Errorf("load history of version %d: %w", versionID, err)
	}
	return h, nil
}

func loadHistory(ctx context.Context, q driver.ConnPrepareContext, versionID int64) (*history.History, error) {
	var datasetID, seq int64
	var through *civil.Date
	found := false
	err := rawQuery(ctx, q, `SELECT v.dataset_id, v.seq, d.data_through FROM versions v JOIN datasets d ON d.id = v.dataset_id
		WHERE v.id = ?`, []any{versionID}, func(row []driver.Value) error {
		found = true
		var ok1, ok2 bool
		datasetID, ok1 = row[0].(int64)
		seq, ok2 = row[1].(int64)
		if !ok1 || !ok2 {
			return fmt.Errorf("version row is (%T, %T), want integers", row[0], row[1])
		}
		var text string
		switch v := row[2].(type) {
		case nil:
			return nil
		case string:
			text = v
		case []byte:
			text = string(v)
		default:
			return fmt.Errorf("data_through is %T, want text", row[2])
		}
		day, err := civil.Parse(text)
		if err != nil {
			return fmt.Errorf("dataset %d: stored data_through: %w", datasetID, err)
		}
		through = &day
		return nil
	})
	if err != nil {
		return nil, fmt.Errorf("read version: %w", err)
	}
	if !found {
		return nil, problem.New(problem.NotFound, "there is no version %d", versionID)
	}

	// The versions read, with their order counts (0 for one still loading)
	// as the Builder's size hint.
	var versions []int64
	hint := 0
	err = rawQuery(ctx, q, `SELECT id, orders_added FROM versions WHERE dataset_id = ? AND seq <= ? AND (state = 'ready' OR id = ?) ORDER BY seq`,
		[]any{datasetID, seq, versionID}, func(row []driver.Value) error {
			id, ok1 := row[0].(int64)
			n, ok2 := row[1].(int64)
			if !ok1 || !ok2 {
				return fmt.Errorf("version row is (%T, %T), want integers", row[0], row[1])
			}
			versions = append(versions, id)
			hint += int(n)
			return nil
		})
	if err != nil {
		return nil, fmt.Errorf("list versions of dataset %d: %w", datasetID, err)
	}

	// Ids are assigned in version order, so the customers of the versions
	// read are ids 0 to their largest; only a version left loading between
	// them (a crash not yet purged) leaves ids in that range belonging to
	// no version read, which then count as customers without orders.
	maxID := int64(-1)
	err = rawQuery(ctx, q, `SELECT COALESCE(max(id), -1) FROM customers WHERE dataset_id = ?1 AND version_id IN (
			SELECT id FROM versions WHERE dataset_id = ?1 AND seq <= ?2 AND (state = 'ready' OR id = ?3))`,
		[]any{datasetID, seq, versionID}, func(row []driver.Value) error {
			var ok bool
			if maxID, ok = row[0].(int64); !ok {
				return fmt.Errorf("largest customer id is %T, want an integer", row[0])
			}
			return nil
		})
	if err != nil {
		return nil, fmt.Errorf("largest customer id of dataset %d: %w", datasetID, err)
	}

	b := history.NewBuilder(int(maxID+1), hint)
	var last civil.Date
	orders := 0
	for _, v := range versions {
		err = rawQuery(ctx, q, `SELECT customer_id, day, amount FROM orders WHERE id BETWEEN ?1 << 32 AND (?1 << 32) + 4294967295`,
			[]any{v}, func(row []driver.Value) error {
				c, ok1 := row[0].(int64)
				d, ok2 := row[1].(int64)
				if !ok1 || !ok2 {
					return fmt.Errorf("an order row is (%T, %T, %T), want integers and a number", row[0], row[1], row[2])
				}
				if c < 0 || c > maxID {
					return fmt.Errorf("an order's customer id %d is not a customer of the versions read (ids 0 to %d)", c, maxID)
				}
				if d != int64(int32(d)) {
					return fmt.Errorf("an order's day %d is out of range", d)
				}
				var amount float64
				has := true
				switch a := row[2].(type) {
				case nil:
					has = false
				case float64:
					amount = a
				case int64:
					amount = float64(a)
				default:
					return fmt.Errorf("an order's amount is %T, want a number", row[2])
				}
				if orders == 0 || civil.Date(d) > last {
					last = civil.Date(d)
				}
				orders++
				b.Add(int32(c), civil.Date(d), amount, has)
				return nil
			})
		if err != nil {
			return nil, fmt.Errorf("read orders of version %d: %w", v, err)
		}
	}
	if through == nil {
		through = &last
	}
	h, err := b.Build(*through)
	if err != nil {
		return nil, fmt.Errorf("history of dataset %d: %w", datasetID, err)
	}
	return h, nil
}
