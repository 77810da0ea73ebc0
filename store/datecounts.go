package store

import "context"

// DateCountsByProvince counts, for every province, its dates of review state state whose age lies
// within [minAgeMa, maxAgeMa] (provinces without one are absent): what Dates counts with a province,
// the ages and the state as its filter, for every province in one query read along the age index.
func (d *DB) DateCountsByProvince(ctx context.Context, minAgeMa, maxAgeMa float64, state ReviewState) (map[int64]int, error) {
	rows, err := d.reader().QueryContext(ctx, `SELECT u.province_id, COUNT(*) FROM dates d JOIN units u ON u.id = d.unit_id
		WHERE d.age_ma >= ? AND d.age_ma <= ? AND d.review_state = ? GROUP BY u.province_id`, minAgeMa, maxAgeMa, state)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	out := map[int64]int{}
	for rows.Next() {
		var id int64
		var n int
		if err := rows.Scan(&id, &n); err != nil {
			return nil, err
		}
		out[id] = n
	}
	return out, rows.Err()
}
