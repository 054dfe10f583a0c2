'use client';
import { useMemo, useState } from 'react';
import { useRouter } from 'next/navigation';
import { createColumnHelper, getCoreRowModel, useReactTable } from '@tanstack/react-table';
import { TableView } from '@/components/ui/TableView';
import { Notice } from '@/components/ui/Notice';
import { fmtDate } from '@/components/ui/format';
import { ROLE_LABELS } from '@/lib/auth/roles';
import type { InvitationRow } from '@/lib/services/team';

/** Invitations sent and not yet accepted: resend (a new link) or withdraw. */
export function InvitationsTable({ invitations, canManage }: { invitations: InvitationRow[]; canManage: boolean }) {
  const router = useRouter();
  const [message, setMessage] = useState<{ tone: 'ok' | 'alert'; text: string } | null>(null);
  const [busy, setBusy] = useState<string | null>(null);

  const columns = useMemo(() => {
    const act = async (inv: InvitationRow, kind: 'resend' | 'revoke') => {
      if (kind === 'revoke' && !window.confirm(`Withdraw the invitation to ${inv.email}? Its link stops working.`)) return;
      setBusy(inv.id);
      setMessage(null);
      const res = await fetch(kind === 'resend' ? `/api/team/invitations/${inv.id}/resend` : `/api/team/invitations/${inv.id}`, {
        method: kind === 'resend' ? 'POST' : 'DELETE',
      });
      const body = (await res.json().catch(() => ({}))) as { message?: string };
      setBusy(null);
      if (!res.ok) setMessage({ tone: 'alert', text: body.message ?? 'That did not work. Try again.' });
      else setMessage({ tone: 'ok', text: kind === 'resend' ? `Invitation to ${inv.email} sent again with a new link.` : `Invitation to ${inv.email} withdrawn.` });
      router.refresh();
    };
    const c = createColumnHelper<InvitationRow>();
    return [
      c.accessor('email', { header: 'E-mail' }),
      c.accessor('roles', { header: 'Roles', cell: (info) => info.getValue().map((r) => ROLE_LABELS[r]).join(', ') }),
      c.accessor('invitedBy', { header: 'Invited by', cell: (info) => info.getValue() ?? '—' }),
      c.accessor('createdAt', { header: 'Sent', cell: (info) => fmtDate(info.getValue()) }),
      c.accessor('expiresAt', {
        header: 'Link valid until',
        cell: (info) => (info.row.original.expired ? <span>✕ Expired {fmtDate(info.getValue())}</span> : fmtDate(info.getValue())),
      }),
      ...(canManage
        ? [
            c.display({
              id: 'actions',
              header: () => <span className="sr-only">Actions</span>,
              cell: (info) => (
                <div className="flex flex-wrap gap-2">
                  <button type="button" className="btn-secondary" disabled={busy !== null} aria-label={`Resend the invitation to ${info.row.original.email}`} onClick={() => act(info.row.original, 'resend')}>
                    Resend
                  </button>
                  <button type="button" className="btn-danger" disabled={busy !== null} aria-label={`Withdraw the invitation to ${info.row.original.email}`} onClick={() => act(info.row.original, 'revoke')}>
                    Withdraw
                  </button>
                </div>
              ),
            }),
          ]
        : []),
    ];
  }, [canManage, busy, router]);

  const table = useReactTable({ data: invitations, columns, getCoreRowModel: getCoreRowModel(), getRowId: (r) => r.id });

  return (
    <section aria-labelledby="invitations-heading" className="space-y-3">
      <h2 id="invitations-heading" className="text-xl">
        Pending invitations <span className="text-base font-normal text-ink-500">({invitations.length})</span>
      </h2>
      <p className="text-sm text-ink-700">Invited people join, with these roles, only when they accept.</p>
      {message && <Notice tone={message.tone}>{message.text}</Notice>}
      {invitations.length === 0 ? (
        <p className="card text-ink-700">No invitation is waiting for an answer.</p>
      ) : (
        <TableView table={table} label="Pending invitations" rowProps={(row) => ({ 'data-testid': `invitation-${row.original.email}` })} />
      )}
    </section>
  );
}
