-- The demo database: maintenance records of an invented wind-farm operator.
--
-- One text serves SQLite, PostgreSQL and MariaDB/MySQL. Three slots in braces stand
-- for what the dialects spell differently; Schema fills them in:
--
--   slot               sqlite     postgres   mysql
--   {timestamp}        TIMESTAMP  TIMESTAMP  DATETIME (MySQL's TIMESTAMP shifts values by time zone)
--   {binary}           BLOB       BYTEA      VARBINARY(16)
--   {table_options}    (none)     (none)     ENGINE=InnoDB DEFAULT CHARSET=utf8mb4 COLLATE=utf8mb4_bin
--
-- Foreign keys are table constraints because MySQL ignores REFERENCES written on a
-- column. Every foreign key column has an index, which PostgreSQL and SQLite do not
-- create on their own.

CREATE TABLE site (
    site_id          INTEGER       NOT NULL,
    code             VARCHAR(8)    NOT NULL,
    name             VARCHAR(100)  NOT NULL,
    country          CHAR(2)       NOT NULL,
    region           VARCHAR(100),
    commissioned_on  DATE          NOT NULL,
    latitude         DECIMAL(9,6)  NOT NULL,
    longitude        DECIMAL(9,6)  NOT NULL,
    offshore         BOOLEAN       NOT NULL,
    PRIMARY KEY (site_id),
    UNIQUE (code)
){table_options};

CREATE TABLE turbine (
    turbine_id       INTEGER       NOT NULL,
    serial           VARCHAR(20)   NOT NULL,
    site_id          INTEGER       NOT NULL,
    model            VARCHAR(40)   NOT NULL,
    rated_power_kw   INTEGER       NOT NULL,
    hub_height_m     DECIMAL(5,1)  NOT NULL,
    commissioned_on  DATE          NOT NULL,
    status           VARCHAR(16)   NOT NULL,
    firmware_digest  {binary},
    PRIMARY KEY (turbine_id),
    UNIQUE (serial),
    FOREIGN KEY (site_id) REFERENCES site (site_id)
){table_options};

CREATE INDEX turbine_site_idx ON turbine (site_id);

CREATE TABLE technician (
    technician_id        INTEGER       NOT NULL,
    full_name            VARCHAR(100)  NOT NULL,
    employer             VARCHAR(100)  NOT NULL,
    certification_level  SMALLINT      NOT NULL,
    hired_on             DATE          NOT NULL,
    PRIMARY KEY (technician_id),
    CHECK (certification_level BETWEEN 1 AND 4)
){table_options};

CREATE TABLE part (
    part_id      INTEGER        NOT NULL,
    part_number  VARCHAR(20)    NOT NULL,
    name         VARCHAR(100)   NOT NULL,
    supplier     VARCHAR(100)   NOT NULL,
    unit_cost    DECIMAL(10,2)  NOT NULL,
    PRIMARY KEY (part_id),
    UNIQUE (part_number)
){table_options};

CREATE TABLE work_order (
    work_order_id  INTEGER      NOT NULL,
    order_number   VARCHAR(16)  NOT NULL,
    turbine_id     INTEGER      NOT NULL,
    technician_id  INTEGER,
    opened_at      {timestamp}  NOT NULL,
    closed_at      {timestamp},
    priority       VARCHAR(8)   NOT NULL,
    status         VARCHAR(12)  NOT NULL,
    category       VARCHAR(20)  NOT NULL,
    description    TEXT         NOT NULL,
    PRIMARY KEY (work_order_id),
    UNIQUE (order_number),
    FOREIGN KEY (turbine_id) REFERENCES turbine (turbine_id),
    FOREIGN KEY (technician_id) REFERENCES technician (technician_id)
){table_options};

CREATE INDEX work_order_turbine_idx ON work_order (turbine_id);

CREATE INDEX work_order_technician_idx ON work_order (technician_id);

CREATE TABLE inspection (
    inspection_id    INTEGER           NOT NULL,
    turbine_id       INTEGER           NOT NULL,
    technician_id    INTEGER           NOT NULL,
    inspected_on     DATE              NOT NULL,
    blade_condition  INTEGER           NOT NULL,
    vibration_mm_s   DOUBLE PRECISION  NOT NULL,
    passed           BOOLEAN           NOT NULL,
    notes            TEXT,
    PRIMARY KEY (inspection_id),
    FOREIGN KEY (turbine_id) REFERENCES turbine (turbine_id),
    FOREIGN KEY (technician_id) REFERENCES technician (technician_id),
    CHECK (blade_condition BETWEEN 1 AND 5)
){table_options};

CREATE INDEX inspection_turbine_idx ON inspection (turbine_id);

CREATE INDEX inspection_technician_idx ON inspection (technician_id);

-- The parts a work order used: one row per (work order, part), the composite key.
CREATE TABLE part_usage (
    work_order_id  INTEGER  NOT NULL,
    part_id        INTEGER  NOT NULL,
    quantity       INTEGER  NOT NULL,
    PRIMARY KEY (work_order_id, part_id),
    FOREIGN KEY (work_order_id) REFERENCES work_order (work_order_id),
    FOREIGN KEY (part_id) REFERENCES part (part_id),
    CHECK (quantity > 0)
){table_options};

CREATE INDEX part_usage_part_idx ON part_usage (part_id);
