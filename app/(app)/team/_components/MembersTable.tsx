'use client';
import { useMemo, useState } from 'react';
import { useRouter } from 'next/navigation';
import { createColumnHelper, getCoreRowModel, useReactTable } from '@tanstack/react-table';
import { TableView } from '@/components/ui/TableView';
import type { Role } from '@/lib/auth/roles';
import type { MemberRow } from '@/lib/services/team';
import { ROLE_LABELS } from '@/lib/auth/roles';
import { Notice } from '@/components/ui/Notice';
import { fmtDateTime } from '@/components/ui/format';
import { ROLE_OPTIONS } from './roles';

const STATUS_TEXT = { active: '● Active', deactivated: '○ Deactivated' } as const;

export function MembersTable({ members, currentUserId, canManage }: { members: MemberRow[]; currentUserId: string; canManage: boolean }) {
  const [editing, setEditing] = useState<string | null>(null);
  const [message, setMessage] = useState<{ tone: 'ok' | 'alert'; text: string } | null>(null);
  const router = useRouter();

  const columns = useMemo(() => {
    const c = createColumnHelper<MemberRow>();
    return [
      c.accessor((r) => r.name ?? r.email, {
        id: 'person',
        header: 'Person',
        cell: (info) => (
          <div>
            <div className="font-medium">{info.row.original.name ?? '—'}</div>
            <div className="text-ink-500">{info.row.original.email}</div>
          </div>
        ),
      }),
      c.accessor('roles', {
        header: 'Roles',
        cell: (info) =>
          editing === info.row.original.userId ? (
            <RoleEditor
              member={info.row.original}
              onDone={(text, tone) => {
                setEditing(null);
                setMessage({ text, tone });
                router.refresh();
              }}
              onCancel={() => setEditing(null)}
            />
          ) : info.getValue().length ? (
            info.getValue().map((r) => ROLE_LABELS[r]).join(', ')
          ) : (
            <span className="text-ink-500">None</span>
          ),
      }),
      c.accessor('status', { header: 'Status', cell: (info) => STATUS_TEXT[info.getValue()] }),
      c.accessor('lastSignInAt', {
        header: 'Last sign-in',
        cell: (info) => (info.getValue() ? fmtDateTime(info.getValue()!) : 'Never'),
      }),
      ...(canManage
        ? [
            c.display({
              id: 'actions',
              header: () => <span className="sr-only">Actions</span>,
              cell: (info) => {
                const m = info.row.original;
                if (editing === m.userId) return null;
                if (m.userId === currentUserId) return <span className="text-sm text-ink-500">Another administrator changes your roles.</span>;
                const who = m.name ?? m.email;
                return (
                  <div className="flex flex-wrap gap-2">
                    <button
                      type="button"
                      className="btn-secondary"
                      onClick={() => {
                        setMessage(null);
                        setEditing(m.userId);
                      }}
                      aria-label={`${m.status === 'deactivated' ? 'Reactivate' : 'Change roles of'} ${who}`}
                    >
                      {m.status === 'deactivated' ? 'Reactivate' : 'Change roles'}
                    </button>
                    {m.status === 'active' && (
                      <button
                        type="button"
                        className="btn-danger"
                        aria-label={`Deactivate ${who}`}
                        onClick={async () => {
                          if (!window.confirm(`Deactivate ${who}? Every role of theirs in this practice is revoked and their sessions end at once.`)) return;
                          setMessage(null);
                          const res = await fetch(`/api/team/members/${m.userId}`, { method: 'DELETE' });
                          const body = (await res.json().catch(() => ({}))) as { message?: string };
                          setMessage(res.ok ? { tone: 'ok', text: `${who} is deactivated.` } : { tone: 'alert', text: body.message ?? 'The member could not be deactivated.' });
                          router.refresh();
                        }}
                      >
                        Deactivate
                      </button>
                    )}
                  </div>
                );
              },
            }),
          ]
        : []),
    ];
  }, [editing, canManage, router, currentUserId]);

  const table = useReactTable({ data: members, columns, getCoreRowModel: getCoreRowModel(), getRowId: (r) => r.userId });

  return (
    <section aria-labelledby="members-heading" className="space-y-3">
      <h2 id="members-heading" className="text-xl">
        Members <span className="text-base font-normal text-ink-500">({members.length})</span>
      </h2>
      {message && <Notice tone={message.tone}>{message.text}</Notice>}
      {members.length === 0 ? (
        <p className="card text-ink-700">Nobody is in this practice yet. Invite the first colleague below.</p>
      ) : (
        <TableView
          table={table}
          label="Members"
          rowProps={(row) => ({
            'data-testid': `member-${row.original.email}`,
            className: row.original.userId === currentUserId ? 'bg-dura-50/40' : undefined,
          })}
        />
      )}
    </section>
  );
}

function RoleEditor({
  member,
  onDone,
  onCancel,
}: {
  member: MemberRow;
  onDone: (text: string, tone: 'ok' | 'alert') => void;
  onCancel: () => void;
}) {
  const [roles, setRoles] = useState<Role[]>(member.roles);
  const [busy, setBusy] = useState(false);
  const [error, setError] = useState<string | null>(null);
  const save = async () => {
    setBusy(true);
    setError(null);
    const res = await fetch(`/api/team/members/${member.userId}`, {
      method: 'PATCH',
      headers: { 'Content-Type': 'application/json' },
      body: JSON.stringify({ roles }),
    });
    setBusy(false);
    if (!res.ok) {
      const body = (await res.json().catch(() => ({}))) as { message?: string };
      setError(body.message ?? 'The roles could not be saved.');
      return;
    }
    onDone(`Roles of ${member.name ?? member.email} saved.`, 'ok');
  };
  return (
    <fieldset className="space-y-2">
      <legend className="sr-only">Roles of {member.name ?? member.email}</legend>
      {ROLE_OPTIONS.map((o) => (
        <label key={o.value} className="flex items-center gap-2">
          <input
            type="checkbox"
            className="h-4 w-4 accent-dura-700"
            checked={roles.includes(o.value)}
            onChange={(e) => setRoles((rs) => (e.target.checked ? [...rs, o.value] : rs.filter((r) => r !== o.value)))}
          />
          {o.label}
        </label>
      ))}
      {error && <Notice tone="alert">{error}</Notice>}
      <div className="flex gap-2 pt-1">
        <button type="button" className="btn-primary" onClick={save} disabled={busy}>
          {busy ? 'Saving…' : 'Save roles'}
        </button>
        <button type="button" className="btn-secondary" onClick={onCancel} disabled={busy}>
          Cancel
        </button>
      </div>
    </fieldset>
  );
}
