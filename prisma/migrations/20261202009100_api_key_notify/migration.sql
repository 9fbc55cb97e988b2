-- Every change to an API key or its equipment scope notifies the api instances, which cache the
-- principal of a key that authenticated (apps/api/src/auth/api-key-cache.ts) and forget it on this
-- notification. Statement-level: one notification per statement, whatever the number of rows.
CREATE OR REPLACE FUNCTION "ausline_notify_api_keys"() RETURNS trigger
LANGUAGE plpgsql AS $$
BEGIN
  PERFORM pg_notify('ausline_api_keys', TG_TABLE_NAME);
  RETURN NULL;
END;
$$;

CREATE TRIGGER "ApiKey_notify"
AFTER INSERT OR UPDATE OR DELETE OR TRUNCATE ON "ApiKey"
FOR EACH STATEMENT EXECUTE FUNCTION "ausline_notify_api_keys"();

CREATE TRIGGER "ApiKeyEquipment_notify"
AFTER INSERT OR UPDATE OR DELETE OR TRUNCATE ON "ApiKeyEquipment"
FOR EACH STATEMENT EXECUTE FUNCTION "ausline_notify_api_keys"();
