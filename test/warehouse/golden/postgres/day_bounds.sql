select ($1::date)::timestamp at time zone $2 as lo, ($1::date + 1)::timestamp at time zone $2 as hi

-- values: ["2026-03-08","America/New_York"]
