// The near-dup stage's band table (stages/near_dup_table.h) under keys made
// to collide: keys sharing their top 40 bits (one home slot at every table
// size the test reaches) and dense runs of neighbouring home slots. Every
// answer is checked against std::unordered_map of the keys' top 58 bits (the
// C++ standard library as the reference set), and the table must stay
// within its stated memory bound instead of growing until the keys part.
#include <gtest/gtest.h>

#include <algorithm>
#include <random>
#include <unordered_map>
#include <vector>

#include "stages/near_dup_table.h"

namespace sheaf {
namespace {

// Puts the keys in as the stage does (find, then insert what is missing,
// kept pairs numbered in insert order) and checks each step against the
// reference; returns the reference.
using Reference = std::unordered_map<uint64_t, int64_t>;  // top 58 bits -> kept pair

void fill(NearDupBandTable& t, const std::vector<uint64_t>& keys, Reference& ref) {
  for (uint64_t key : keys) {
    NearDupBandTable::Spot spot;
    int64_t got = t.find(key, spot);
    auto it = ref.find(key >> 6);
    EXPECT_EQ(got, it == ref.end() ? -1 : it->second) << std::hex << key;
    if (got >= 0) continue;
    int64_t id = static_cast<int64_t>(ref.size());
    t.insert(key, static_cast<uint64_t>(id), spot);
    ref.emplace(key >> 6, id);
  }
}

Reference fill(NearDupBandTable& t, const std::vector<uint64_t>& keys) {
  Reference ref;
  fill(t, keys, ref);
  return ref;
}

void check_all(const NearDupBandTable& t, const std::unordered_map<uint64_t, int64_t>& ref,
               const std::vector<uint64_t>& probes) {
  for (const auto& [k, id] : ref) {
    NearDupBandTable::Spot spot;
    ASSERT_EQ(t.find(k << 6, spot), id) << std::hex << (k << 6);
    // The low 6 bits are not kept: a key differing only there matches.
    ASSERT_EQ(t.find((k << 6) | 0x2A, spot), id);
  }
  for (uint64_t key : probes) {
    NearDupBandTable::Spot spot;
    auto it = ref.find(key >> 6);
    ASSERT_EQ(t.find(key, spot), it == ref.end() ? -1 : it->second) << std::hex << key;
  }
}

// The bound stated in near_dup_table.h: 2^q <= max(4096, 8/3 x count), so
// at most 8 bytes x that, plus one overflow node per overflowed key.
void check_memory(const NearDupBandTable& t) {
  size_t n = t.size();
  size_t slot_bound = std::max<size_t>(4096, n * 8 / 3 + 1);
  EXPECT_LE(t.slots(), slot_bound) << "keys " << n;
  EXPECT_LE(t.overflowed(), n);
  EXPECT_EQ(t.memory_bytes(), t.slots() * 8 + t.overflowed() * NearDupBandTable::kOverflowNodeBytes);
}

TEST(NearDupTable, KeysSharingTheirTopBitsStayFindableAndBounded) {
  std::mt19937_64 rng(7);
  std::vector<uint64_t> keys;
  // 3,000 keys with the same top 40 bits: one home slot until 2^40 slots,
  // so only 63 of them fit there. (Before the overflow map, the table
  // doubled until they parted: 2^41 slots, 16 TiB.)
  const uint64_t top = 0xDEADBEEF12ULL << 24;
  for (int i = 0; i < 3000; ++i) keys.push_back(top | (rng() & ((uint64_t{1} << 24) - 1)));
  // 4,000 keys whose homes (in a 4,096-slot table) are 64 neighbouring
  // slots: a run far longer than the 6-bit distance allows.
  for (int i = 0; i < 4000; ++i) keys.push_back((uint64_t{1000 + rng() % 64} << 52) | (rng() >> 12));
  // 20,000 ordinary keys.
  for (int i = 0; i < 20000; ++i) keys.push_back(rng());
  // Some keys twice: the second time they are found, not inserted.
  for (int i = 0; i < 500; ++i) keys.push_back(keys[rng() % keys.size()]);
  std::shuffle(keys.begin(), keys.end(), rng);

  NearDupBandTable t;
  auto ref = fill(t, keys);
  EXPECT_EQ(t.size(), ref.size());
  EXPECT_GT(t.overflowed(), 2900u);  // the shared-top keys really overflowed
  std::vector<uint64_t> probes;
  for (int i = 0; i < 20000; ++i) probes.push_back(rng());
  for (int i = 0; i < 5000; ++i) probes.push_back(top | (rng() & ((uint64_t{1} << 24) - 1)));
  for (int i = 0; i < 5000; ++i) probes.push_back((uint64_t{1000 + rng() % 64} << 52) | (rng() >> 12));
  check_all(t, ref, probes);
  check_memory(t);
  EXPECT_LE(t.slots(), size_t{1} << 16);
}

TEST(NearDupTable, CraftedKeysFirstThenOrdinaryKeys) {
  // The overflow map holds the crafted keys while the table grows with
  // ordinary ones; each doubling moves back what now fits.
  std::mt19937_64 rng(11);
  std::vector<uint64_t> crafted, ordinary;
  // 200 keys with the same top 8 bits: 16 neighbouring home slots at 4,096
  // slots (far too few), 512 at 2^17.
  for (int i = 0; i < 200; ++i) crafted.push_back((uint64_t{0x5A} << 56) | (rng() >> 8));
  for (int i = 0; i < 60000; ++i) ordinary.push_back(rng());
  NearDupBandTable t;
  Reference ref;
  fill(t, crafted, ref);
  EXPECT_EQ(t.slots(), 4096u);
  EXPECT_GT(t.overflowed(), 100u);
  fill(t, ordinary, ref);
  std::vector<uint64_t> probes;
  for (int i = 0; i < 20000; ++i) probes.push_back(rng());
  for (int i = 0; i < 2000; ++i) probes.push_back((uint64_t{0x5A} << 56) | (rng() >> 8));
  check_all(t, ref, probes);
  check_memory(t);
  EXPECT_EQ(t.slots(), size_t{1} << 17);  // 3/4 of 2^16 = 49,152 < 60,200 keys
  EXPECT_EQ(t.overflowed(), 0u);
}

TEST(NearDupTable, OrdinaryKeysNeverOverflow) {
  // Random keys at up to 3/4 load: the map stays empty (what keeps the
  // stage's outputs and speed as they were).
  std::mt19937_64 rng(3);
  std::vector<uint64_t> keys(200000);
  for (auto& k : keys) k = rng();
  NearDupBandTable t;
  auto ref = fill(t, keys);
  EXPECT_EQ(t.overflowed(), 0u);
  EXPECT_EQ(t.slots(), size_t{1} << 19);  // 3/4 of 2^18 = 196,608 < 200,000 keys
  check_memory(t);
}

}  // namespace
}  // namespace sheaf
