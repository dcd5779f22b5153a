// A second process writing edges in a loop, as a running daemon would while `pairwatch backup` copies the file.
// Each batch of 100 rows is one transaction, so a consistent copy always holds a multiple of 100 of them.
import Database from 'better-sqlite3';

const db = new Database(process.argv[2]);
db.pragma('busy_timeout = 5000');
const insert = db.prepare("INSERT INTO edges (decoder_id, input, band, decoder_us, at) VALUES ('office', 1, ?, ?, ?)");
const batch = db.transaction((start) => {
  for (let i = 0; i < 100; i++) insert.run(i % 2 ? 'N' : 'H', start + i, new Date(1_770_000_000_000 + start + i).toISOString());
});
let written = 0;
let stopping = false;
process.stdin.on('data', () => {
  stopping = true;
});
function step() {
  if (stopping) {
    db.close();
    process.stdout.write(`done ${written}\n`);
    process.exit(0);
  }
  batch(written);
  written += 100;
  if (written === 100) process.stdout.write('ready\n');
  setImmediate(step);
}
step();
