import { useRouter } from 'vue-router'

// A list table's `@click:row` handler: a click on a row opens that row's record page, the route `name` with the
// row's id (`params: { id }`).

export function useRowOpensRecord(name: string) {
  const router = useRouter()
  return (_e: unknown, row: { item: { id: number } }) => void router.push({ name, params: { id: row.item.id } })
}
