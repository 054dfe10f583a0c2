import { handler } from '@/lib/http';
import { listMailbox } from '@/lib/services/mailbox';

export const GET = handler('mailbox.read', async ({ em, actor }) => ({ messages: await listMailbox(em, actor) }));
