import { Migration } from '@mikro-orm/migrations';

/**
 * Sessions, invitations and deactivation (issue 9 items 1, 2 and 7; issue 10 "Team").
 * - app_user.session_version: carried in the session token and compared on every request;
 *   sign-out, a password change, a revoked role, deactivation and "sign out everywhere" raise it.
 * - invitation.revoked_at: an administrator can withdraw a pending invitation.
 * - membership.deactivated_at: the member was removed from the practice (all roles revoked at once).
 * - Nobody joins a practice without saying yes: memberships are now created when the invitation is
 *   accepted, not when it is sent. Memberships that only an unaccepted invitation ever granted are
 *   removed here (their roles stay on the pending invitation and come back on acceptance).
 */
export class Migration20261202100000 extends Migration {
  override async up(): Promise<void> {
    this.addSql(`alter table "app_user" add column "session_version" int not null default 0;`);
    this.addSql(`alter table "invitation" add column "revoked_at" timestamptz null;`);
    this.addSql(`alter table "membership" add column "deactivated_at" timestamptz null;`);
    this.addSql(`delete from "membership" m
      where exists (select 1 from "invitation" i where i."user_id" = m."user_id" and i."practice_id" = m."practice_id" and i."accepted_at" is null)
        and not exists (select 1 from "invitation" i where i."user_id" = m."user_id" and i."practice_id" = m."practice_id" and i."accepted_at" is not null);`);
  }

  override async down(): Promise<void> {
    // The removed pending memberships are not recreated: their invitations still hold the roles.
    this.addSql(`alter table "membership" drop column "deactivated_at";`);
    this.addSql(`alter table "invitation" drop column "revoked_at";`);
    this.addSql(`alter table "app_user" drop column "session_version";`);
  }
}
