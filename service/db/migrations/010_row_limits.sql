-- plumbline state, part 9: the row limits a day's rollup reached, per platform
-- (service/warehouse/mapping.ts, ROW_LIMITS): {"versions": {"seen": 812, "kept": 500}, ...}.
alter table day_status add column over_limits jsonb not null default '{}';
