// @vitest-environment happy-dom
import { QueryClient, QueryClientProvider } from '@tanstack/react-query';
import { cleanup, render, screen, waitFor, within } from '@testing-library/react';
import userEvent from '@testing-library/user-event';
import { createMemoryRouter, RouterProvider } from 'react-router';
import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest';
import { NewAnalysisForm } from '../../web/src/components/forms/NewAnalysisForm';

type Kind = 'toas' | 'profiles' | 'result';

/** What the fake server says the next upload holds. */
let nextKind: Kind = 'toas';
const sent: FormData[] = [];

/** XMLHttpRequest as the upload uses it: progress, then 201 with the recorded upload. */
class FakeXhr {
  status = 0;
  responseText = '';
  responseType = '';
  upload: { onprogress: ((e: ProgressEvent) => void) | null } = { onprogress: null };
  onload: (() => void) | null = null;
  onerror: (() => void) | null = null;
  onabort: (() => void) | null = null;
  open() {}
  setRequestHeader() {}
  abort() {
    this.onabort?.();
  }
  send(body: FormData) {
    sent.push(body);
    const file = body.get('file') as File;
    const kind = nextKind;
    setTimeout(() => {
      this.upload.onprogress?.({
        lengthComputable: true,
        loaded: file.size / 2,
        total: file.size,
      } as ProgressEvent);
      this.status = 201;
      this.responseText = JSON.stringify({
        id: `up-${kind}`,
        file_name: file.name,
        size_bytes: file.size,
        sha256: 'ab'.repeat(32),
        kind,
      });
      this.onload?.();
    }, 5);
  }
}

const json = (status: number, body: unknown) =>
  new Response(JSON.stringify(body), {
    status,
    headers: { 'Content-Type': 'application/json' },
  });

let polls = 0;
const fetchMock = vi.fn(async (url: string, init?: RequestInit) => {
  if (url === '/api/analyses' && init?.method === 'POST') {
    const body = JSON.parse(String(init.body));
    return json(202, { id: 'job-1', state: 'queued', kind: body.kind, params: body.params });
  }
  if (url === '/api/analyses/job-1') {
    polls++;
    return json(
      200,
      polls < 2
        ? { id: 'job-1', state: 'running', run_id: null, error: null }
        : { id: 'job-1', state: 'done', run_id: 'run-42', error: null },
    );
  }
  return json(404, { error: { code: 'not_found', message: `${url} not found` } });
});

function setup() {
  const qc = new QueryClient({ defaultOptions: { queries: { retry: false } } });
  const router = createMemoryRouter(
    [
      { path: '/analyses/new', element: <NewAnalysisForm /> },
      { path: '/runs/:id', element: <p>run page</p> },
    ],
    { initialEntries: ['/analyses/new'] },
  );
  render(
    <QueryClientProvider client={qc}>
      <RouterProvider router={router} />
    </QueryClientProvider>,
  );
  return { user: userEvent.setup(), router };
}

const csv = () =>
  new File(['source,mjd,freq_mhz,err_us\nSBP-A,60202.18,593.75,0.3\n'], 'SBP-A.csv', {
    type: 'text/csv',
  });
const options = () =>
  within(screen.getByLabelText('Analysis'))
    .getAllByRole('option')
    .map((o) => (o as HTMLOptionElement).value);
const runButton = () => screen.getByRole('button', { name: 'Upload and run' });

beforeEach(() => {
  nextKind = 'toas';
  sent.length = 0;
  polls = 0;
  fetchMock.mockClear();
  vi.stubGlobal('XMLHttpRequest', FakeXhr);
  vi.stubGlobal('fetch', fetchMock);
});
afterEach(() => {
  cleanup();
  vi.unstubAllGlobals();
});

describe('new analysis form', () => {
  it('offers only the analyses the uploaded kind allows', async () => {
    const { user } = setup();
    expect(options()).toEqual(['dm-fit', 'dm-series', 'scatter-fit']);

    nextKind = 'profiles';
    await user.upload(screen.getByLabelText('Input file'), csv());
    await waitFor(() => expect(options()).toEqual(['scatter-fit']));
    expect(await screen.findByLabelText('Model')).toBeTruthy();
    expect(screen.getByText('ab'.repeat(32))).toBeTruthy();
    expect(sent[0].get('file')).toBeInstanceOf(File);
    // α of a scattering fit: fitted, or held at a number the analyst types
    await waitFor(() => expect((runButton() as HTMLButtonElement).disabled).toBe(false));
    await user.selectOptions(screen.getByLabelText('α'), 'fixed');
    await user.clear(screen.getByLabelText('α held at'));
    expect(await screen.findByText('enter a number')).toBeTruthy();
    expect((runButton() as HTMLButtonElement).disabled).toBe(true);
    await user.type(screen.getByLabelText('α held at'), '4.4');
    await waitFor(() => expect((runButton() as HTMLButtonElement).disabled).toBe(false));

    nextKind = 'result';
    await user.upload(screen.getByLabelText('Input file'), csv());
    await waitFor(() => expect(options()).toEqual(['dm-series']));
    // the form switches to the only analysis left on its next render: wait for its fields
    expect(await screen.findByLabelText('Smoothing')).toBeTruthy();

    nextKind = 'toas';
    await user.upload(screen.getByLabelText('Input file'), csv());
    await waitFor(() => expect(options()).toEqual(['dm-fit', 'dm-series']));
  });

  it('validates as you type and only runs a valid request', async () => {
    const { user, router } = setup();
    expect((runButton() as HTMLButtonElement).disabled).toBe(true); // no file yet
    await user.upload(screen.getByLabelText('Input file'), csv());
    await waitFor(() => expect(options()).toEqual(['dm-fit', 'dm-series']));
    await waitFor(() => expect((runButton() as HTMLButtonElement).disabled).toBe(false));

    const clip = screen.getByLabelText('Clip at (σ)');
    await user.type(clip, '0');
    expect(await screen.findByText('must be at least 1')).toBeTruthy();
    expect(clip.getAttribute('aria-invalid')).toBe('true');
    expect((runButton() as HTMLButtonElement).disabled).toBe(true);

    await user.clear(clip);
    await user.type(clip, 'x');
    expect(await screen.findByText('enter a number')).toBeTruthy();

    await user.clear(clip);
    await user.type(clip, '4');
    await waitFor(() => expect(screen.queryByText('enter a number')).toBeNull());
    await waitFor(() => expect((runButton() as HTMLButtonElement).disabled).toBe(false));

    // window and gap are two groupings: both at once is refused, under the field
    await user.type(screen.getByLabelText('Window (days)'), '14');
    await user.type(screen.getByLabelText('Gap (days)'), '1');
    expect(await screen.findByText(/give either Window or Gap, not both/)).toBeTruthy();
    expect((runButton() as HTMLButtonElement).disabled).toBe(true);
    await user.clear(screen.getByLabelText('Gap (days)'));
    await waitFor(() => expect((runButton() as HTMLButtonElement).disabled).toBe(false));

    // the scattering options appear with the scattering term
    expect(screen.queryByLabelText('α')).toBeNull();
    await user.selectOptions(screen.getByLabelText('Scattering term'), 'fixed');
    await user.type(screen.getByLabelText('α'), '4.4');

    await user.click(runButton());
    await waitFor(() => expect(screen.getByRole('status').textContent).toMatch(/running/));
    await waitFor(() => expect(router.state.location.pathname).toBe('/runs/run-42'), {
      timeout: 5000,
    });
    const post = fetchMock.mock.calls.find(
      ([u, i]) => u === '/api/analyses' && i?.method === 'POST',
    );
    expect(JSON.parse(String(post?.[1]?.body))).toEqual({
      kind: 'dm-fit',
      upload_id: 'up-toas',
      params: {
        window_days: 14,
        clip_sigma: 4,
        scatter: 'fixed',
        alpha: 4.4,
        constant: 'conventional',
      },
    });
  });
});
