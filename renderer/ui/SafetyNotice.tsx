export function SafetyNotice() {
  return (
    <aside className="safety" aria-label="Safety">
      <strong>Safety.</strong> Units on this bench may be mains powered with covers off: follow your workplace electrical-safety
      rules and local codes. Keep monitor speakers and headphones disconnected or muted while trimming — a full-level
      low-frequency tone or an oscillating unit can damage drivers and hearing. Start every trim at the safe (least-compensation)
      end. <kbd>Esc</kbd> mutes the generator at once. Trimbench measures; it does not certify electrical safety.
    </aside>
  );
}
