import { canContribute, isAdmin, useSession } from '../api/session';
import { AuditSection } from '../components/admin/AuditSection';
import { MailSection } from '../components/admin/MailSection';
import { TokensSection } from '../components/admin/TokensSection';
import { UsersSection } from '../components/admin/UsersSection';
import { Empty, PageTitle } from '../components/QueryState';

const SECTIONS = [
  { id: 'admin-users', title: 'Users' },
  { id: 'admin-tokens', title: 'API tokens' },
  { id: 'admin-audit', title: 'Audit log' },
  { id: 'admin-mail', title: 'Mail' },
];

/**
 * Admins: users, everyone's API tokens, the audit log and outgoing mail. Analysts and leads get
 * only their own API tokens here; viewers are told who can do what.
 */
export function AdminPage() {
  const { data: me } = useSession();
  if (!me) return null;
  if (isAdmin(me))
    return (
      <>
        <PageTitle
          aside={
            <nav aria-label="Admin sections" className="flex flex-wrap gap-x-4 text-sm">
              {SECTIONS.map((s) => (
                <a key={s.id} href={`#${s.id}`} className="text-accent hover:underline">
                  {s.title}
                </a>
              ))}
            </nav>
          }
        >
          Admin
        </PageTitle>
        <div className="flex flex-col gap-10">
          <UsersSection me={me} />
          <TokensSection me={me} all />
          <AuditSection />
          <MailSection />
        </div>
      </>
    );
  if (canContribute(me))
    return (
      <>
        <PageTitle>Your tokens</PageTitle>
        <TokensSection me={me} all={false} />
      </>
    );
  return (
    <>
      <PageTitle>Admin</PageTitle>
      <Empty>
        Only admins manage users, tokens and the audit log. As a viewer you can read and download
        approved runs; ask an admin if you need another role.
      </Empty>
    </>
  );
}
