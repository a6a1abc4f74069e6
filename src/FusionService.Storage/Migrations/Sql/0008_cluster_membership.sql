-- 0008_cluster_membership: the Orleans cluster membership of the service processes that share this database
-- (Orleans:Clustering = Postgres). The service's own IMembershipTable (FusionService/Tracking/Cluster) reads and
-- writes these two tables; Orleans runs the membership protocol (probes, votes, death declarations) on top of them.
-- One row per cluster in cluster_versions carries the table version Orleans uses for optimistic concurrency: every
-- insert or update of a member also moves the version, and fails when the version it expected has moved meanwhile.
CREATE TABLE cluster_versions (
    cluster_id text    PRIMARY KEY,
    version    integer NOT NULL CHECK (version >= 0)
);
COMMENT ON TABLE cluster_versions IS
    'Membership table version per Orleans cluster id; its text form is the version etag Orleans hands back.';

CREATE TABLE cluster_members (
    cluster_id        text        NOT NULL REFERENCES cluster_versions (cluster_id) ON DELETE CASCADE,
    silo_address      text        NOT NULL,
    status            smallint    NOT NULL,
    proxy_port        integer     NOT NULL,
    host_name         text        NOT NULL,
    silo_name         text        NOT NULL,
    role_name         text        NULL,
    update_zone       integer     NOT NULL,
    fault_zone        integer     NOT NULL,
    start_time        timestamptz NOT NULL,
    i_am_alive_time   timestamptz NOT NULL,
    suspect_addresses text[]      NOT NULL DEFAULT '{}',
    suspect_times     timestamptz[] NOT NULL DEFAULT '{}',
    etag              integer     NOT NULL DEFAULT 0,
    PRIMARY KEY (cluster_id, silo_address),
    CHECK (cardinality(suspect_addresses) = cardinality(suspect_times))
);
COMMENT ON TABLE cluster_members IS
    'One row per silo (service process) that ever joined the cluster; rows of dead silos are removed after a while.';
COMMENT ON COLUMN cluster_members.silo_address IS 'Orleans silo address in its parsable form: ip:port@generation.';
COMMENT ON COLUMN cluster_members.status IS 'Orleans SiloStatus as a number (3 Active, 5 ShuttingDown, 6 Dead, ...).';
COMMENT ON COLUMN cluster_members.suspect_addresses IS 'Silos that suspected this one, paired with suspect_times.';
COMMENT ON COLUMN cluster_members.etag IS 'Row version; an update must name the value it read.';
