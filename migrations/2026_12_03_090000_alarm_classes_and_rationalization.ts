import { type Kysely, sql } from 'kysely'

// Alerts beside alarms and trips, SIL only on trips (for new and changed rows), safety-related alarms with a claimed
// risk reduction of at most 10, the alarm rationalization record, and the priority matrix's last column read as
// "alert" instead of "no alarm" (docs/domain/alarm-classification.md).
export async function up(db: Kysely<any>): Promise<void> {
  await sql`
    ALTER TABLE limit_function DROP CONSTRAINT limit_function_limit_class_check;
    ALTER TABLE limit_function ADD CONSTRAINT limit_function_limit_class_check
      CHECK (limit_class IN ('alarm','alert','trip'));
    ALTER TABLE limit_function
      ADD COLUMN alarm_type text NOT NULL DEFAULT 'absolute'
        CHECK (alarm_type IN ('absolute','deviation','rate_of_change','discrepancy','bad_value')),
      ADD COLUMN causes text NOT NULL DEFAULT '',
      ADD COLUMN confirmation text NOT NULL DEFAULT '',
      ADD COLUMN impact_category text CHECK (impact_category IN ('safety','environment','asset_production')),
      ADD COLUMN safety_related_alarm boolean NOT NULL DEFAULT false,
      ADD COLUMN claimed_risk_reduction numeric
        CHECK (claimed_risk_reduction IS NULL OR (claimed_risk_reduction >= 1 AND claimed_risk_reduction <= 10));
    ALTER TABLE limit_function ADD CONSTRAINT limit_function_sil_trip_only
      CHECK (sil IS NULL OR limit_class = 'trip') NOT VALID;
    ALTER TABLE limit_function ADD CONSTRAINT limit_function_safety_alarm_only
      CHECK (NOT safety_related_alarm OR limit_class = 'alarm') NOT VALID;
    UPDATE site SET policy = jsonb_set(policy, '{priorityMatrix}',
      replace((policy -> 'priorityMatrix')::text, '"none"', '"alert"')::jsonb)
    WHERE policy ? 'priorityMatrix';
  `.execute(db)
}

export async function down(db: Kysely<any>): Promise<void> {
  await sql`
    UPDATE site SET policy = jsonb_set(policy, '{priorityMatrix}',
      replace((policy -> 'priorityMatrix')::text, '"alert"', '"none"')::jsonb)
    WHERE policy ? 'priorityMatrix';
    ALTER TABLE limit_function DROP CONSTRAINT limit_function_safety_alarm_only;
    ALTER TABLE limit_function DROP CONSTRAINT limit_function_sil_trip_only;
    ALTER TABLE limit_function DROP COLUMN alarm_type, DROP COLUMN causes, DROP COLUMN confirmation,
      DROP COLUMN impact_category, DROP COLUMN safety_related_alarm, DROP COLUMN claimed_risk_reduction;
    ALTER TABLE limit_function DROP CONSTRAINT limit_function_limit_class_check;
    ALTER TABLE limit_function ADD CONSTRAINT limit_function_limit_class_check
      CHECK (limit_class IN ('alarm','trip')) NOT VALID;
  `.execute(db)
}
