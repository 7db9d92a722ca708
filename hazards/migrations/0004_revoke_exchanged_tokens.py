"""A password change or deactivation revokes the person's password-exchanged API tokens.

A trigger rather than a signal, so that every path that changes auth_user (the admin, a
password reset, `manage.py changepassword`, QuerySet.update(), raw SQL) revokes them."""

from django.db import migrations

SQL = """
CREATE OR REPLACE FUNCTION hazards_revoke_exchanged_tokens() RETURNS trigger
LANGUAGE plpgsql AS $$
BEGIN
    IF NEW.password IS DISTINCT FROM OLD.password
       OR (OLD.is_active AND NOT NEW.is_active) THEN
        UPDATE hazards_apitoken SET revoked_at = now()
         WHERE user_id = NEW.id AND name = 'password exchange' AND revoked_at IS NULL;
    END IF;
    RETURN NULL;
END
$$;
CREATE OR REPLACE TRIGGER hazards_user_revokes_exchanged_tokens
    AFTER UPDATE OF password, is_active ON auth_user
    FOR EACH ROW EXECUTE FUNCTION hazards_revoke_exchanged_tokens();
"""
REVERSE = """
DROP TRIGGER IF EXISTS hazards_user_revokes_exchanged_tokens ON auth_user;
DROP FUNCTION IF EXISTS hazards_revoke_exchanged_tokens();
"""


class Migration(migrations.Migration):
    dependencies = [
        ("auth", "0012_alter_user_first_name_max_length"),
        ("hazards", "0003_text_length_limits"),
    ]

    operations = [migrations.RunSQL(SQL, REVERSE)]
