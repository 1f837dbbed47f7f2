// The safety cautions shown where a session is prepared and started (product brief, safety).
export function SessionCautions() {
  return (
    <aside aria-labelledby="cautions-h" className="panel self-start border-brass/50">
      <h2 id="cautions-h" className="font-bold text-brass">
        Before you start
      </h2>
      <ul className="mt-3 list-disc space-y-2 pl-5 text-sm text-haze">
        <li>Run sessions only under an approved research or clinical protocol, with licensed supervision, following local regulations.</li>
        <li>Tiller is not a medical device and its output is not a diagnosis.</li>
        <li>The amplifier's electrical safety (IEC 60601-1) is the hardware's, not Tiller's. Use only equipment approved for use on people.</li>
        <li>Session length and breaks are your call: watch the participant, not only the screen, and stop whenever they ask.</li>
        <li>The feedback view never flashes more than three times a second (WCAG 2.3.1) and offers reduced motion; ask about photosensitivity all the same.</li>
      </ul>
    </aside>
  )
}
