import { useEffect, useState } from 'react';
import type { RunDetail } from '../../shared/ipc/contract.ts';
import { call } from '../api.ts';
import { problemText } from '../problem-text.ts';
import { UnitSheet } from './UnitSheet.tsx';

/** The finished run's sheet: saved as PDF as soon as it is on screen (the PDF is made from this view), and printed on request. */
export function SheetScreen({ detail, onBack }: { detail: RunDetail; onBack(): void }) {
  const [pdfPath, setPdfPath] = useState<string | null>(detail.run.sheetPdfPath);
  const [message, setMessage] = useState<string | null>(null);

  useEffect(() => {
    if (pdfPath) return;
    let cancelled = false;
    const frame = requestAnimationFrame(() => {
      call('saveSheetPdf', { runId: detail.run.id })
        .then((saved) => !cancelled && setPdfPath(saved.path))
        .catch(
          (error: unknown) =>
            !cancelled && setMessage(`The PDF was not saved. ${problemText(error, 'Saving the unit sheet failed', 'Go back and open the sheet again to retry.')}`),
        );
    });
    return () => {
      cancelled = true;
      cancelAnimationFrame(frame);
    };
  }, [detail.run.id, pdfPath]);

  async function print() {
    try {
      const { printed } = await call('printSheet', { runId: detail.run.id });
      setMessage(printed ? null : 'Printing was cancelled.');
    } catch (error) {
      setMessage(problemText(error, 'Printing failed', 'Save the PDF and print it from there, or try Print again.'));
    }
  }

  return <UnitSheet detail={detail} pdfPath={pdfPath} message={message} onPrint={() => void print()} onBack={onBack} />;
}
