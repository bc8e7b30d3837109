// Placeholder until this benchmark section is written.
export async function run(): Promise<void> {
  console.log('(section queue not written yet)');
}
