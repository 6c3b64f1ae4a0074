-- fieldpad schema, migration 0005: a board may override its site's voltage standard and phase colours
-- (sites mix 480 V, 208 V and IEC 400/230 V boards).  NULL: the site's setting applies.
ALTER TABLE board ADD COLUMN voltage_standard TEXT
    CHECK (voltage_standard IS NULL OR voltage_standard IN ('ansi', 'iec'));
ALTER TABLE board ADD COLUMN colour_set TEXT;
