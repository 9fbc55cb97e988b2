-- The append-only trigger raised SQLSTATE 23001 (restrict_violation), which the Prisma client reports as
-- "Foreign key constraint violated" and hides the message. Raise a plain exception (P0001) instead so the
-- message "DeviationAudit is append-only: UPDATE is not allowed" reaches the caller.
CREATE OR REPLACE FUNCTION "DeviationAudit_reject_change"() RETURNS trigger
LANGUAGE plpgsql AS $$
BEGIN
    RAISE EXCEPTION 'DeviationAudit is append-only: % is not allowed', TG_OP;
END;
$$;
