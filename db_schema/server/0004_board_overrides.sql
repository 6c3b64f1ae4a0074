-- fieldpad central server, migration 0004: a board's own voltage standard and phase colours (laptop
-- migration db_schema/0005_board_overrides.sql).  What a board's settings are now travels as
-- setting_version rows; these columns keep the board rows the same shape as the laptops'.

ALTER TABLE board ADD COLUMN voltage_standard TEXT
    CHECK (voltage_standard IS NULL OR voltage_standard IN ('ansi', 'iec'));
ALTER TABLE board ADD COLUMN colour_set TEXT;
