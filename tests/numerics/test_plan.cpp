// The plan's batches (plan/plan.hpp): computed from their index, they must be exactly the list
// the definition gives (case-major; within a case, blocks of at most batch_size consecutive
// members), and a campaign of a billion members must be planned without listing them.
#include <gtest/gtest.h>

#include <cstdint>
#include <stdexcept>
#include <string>
#include <vector>

#include "numerics_fixtures.hpp"
#include "plan/plan.hpp"

namespace chaosweep::testing {
namespace {

/// The batches of `plan` written out one by one from the definition, without Plan::batch:
/// every case in order, and in each the members 0, 1, ... cut into consecutive blocks of
/// batch_size, the last block holding what is left.
std::vector<plan::Batch> enumerate(const plan::Plan& plan) {
  std::vector<plan::Batch> out;
  for (const plan::Case& c : plan.cases) {
    for (std::int64_t m = 0; m < plan.members; ++m) {
      if (m % plan.batch_size == 0) {
        plan::Batch b;
        b.index = static_cast<std::int64_t>(out.size());
        b.case_index = c.index;
        b.first_member = m;
        out.push_back(b);
      }
      ++out.back().count;
    }
  }
  return out;
}

/// The small forced loop with `members` per case in batches of `width`, swept over `axes`.
plan::Plan small_plan(std::int64_t members, int width, const std::vector<spec::SweepAxis>& axes) {
  spec::Spec s = small_lorenz63_spec("plan");
  s.ensemble.members = members;
  s.run.batch_size = width;
  s.sweep = axes;
  return plan::make_plan(s);
}

void expect_same(const plan::Batch& got, const plan::Batch& want) {
  EXPECT_EQ(got.index, want.index);
  EXPECT_EQ(got.case_index, want.case_index);
  EXPECT_EQ(got.first_member, want.first_member);
  EXPECT_EQ(got.count, want.count);
}

// Exact: the definition of a batch (plan.hpp), enumerated member by member above, for member
// counts below, equal to and just above multiples of the batch width, one member, and one and
// two sweep axes (2 x 3 cases, the last axis fastest).
TEST(Plan, BatchesEqualTheirEnumeration) {
  const std::vector<std::vector<spec::SweepAxis>> sweeps = {
      {},
      {{"forcing", {0.0, 1.0, 2.0}, {}}},
      {{"rho", {24.0, 28.0}, {}}, {"forcing", {0.0, 1.0, 2.0}, {}}}};
  for (const auto& axes : sweeps) {
    for (const int width : {8, 16, 64}) {
      for (const std::int64_t members : {1, 7, 8, 9, 16, 17, 63, 64, 65, 200}) {
        SCOPED_TRACE(std::to_string(axes.size()) + " axes, " + std::to_string(members) +
                     " members in batches of " + std::to_string(width));
        const plan::Plan plan = small_plan(members, width, axes);
        const std::vector<plan::Batch> want = enumerate(plan);
        ASSERT_EQ(plan.batch_count(), static_cast<std::int64_t>(want.size()));
        ASSERT_EQ(plan.batch_count(),
                  static_cast<std::int64_t>(plan.cases.size()) * plan.batches_per_case());
        std::vector<std::int64_t> per_case(plan.cases.size(), 0);
        for (std::int64_t i = 0; i < plan.batch_count(); ++i) {
          const plan::Batch b = plan.batch(i);
          expect_same(b, want[static_cast<std::size_t>(i)]);
          EXPECT_GE(b.count, 1);
          EXPECT_LE(b.count, width);
          per_case[static_cast<std::size_t>(b.case_index)] += b.count;
        }
        for (const std::int64_t n : per_case) EXPECT_EQ(n, members);
        EXPECT_THROW(plan.batch(-1), std::out_of_range);
        EXPECT_THROW(plan.batch(plan.batch_count()), std::out_of_range);
      }
    }
  }
}

// Exact: a plan cut down to one case of the campaign (as the pilot runs it) numbers its batches
// from 0 but keeps that case's index in every batch, and cuts its own member count.
TEST(Plan, OneCaseCutKeepsTheCaseIndex) {
  plan::Plan plan = small_plan(100, 16, {{"forcing", {0.0, 1.0, 2.0, 3.0}, {}}});
  plan.cases = {plan.cases[2]};
  plan.members = 40;
  ASSERT_EQ(plan.batch_count(), 3);  // 40 = 16 + 16 + 8
  const std::int64_t counts[] = {16, 16, 8};
  for (std::int64_t i = 0; i < 3; ++i) {
    const plan::Batch b = plan.batch(i);
    EXPECT_EQ(b.index, i);
    EXPECT_EQ(b.case_index, 2);
    EXPECT_EQ(b.first_member, 16 * i);
    EXPECT_EQ(b.count, counts[i]);
  }
}

// Exact: 10 cases of 10^8 + 1 members in batches of 64 are 10^8 / 64 = 1562500 full batches
// and one of a single member per case, 15625010 batches in all (1,000,000,010 members). The
// plan answers from arithmetic; listing the batches would take seconds and half a gigabyte.
TEST(Plan, BillionMembersArePlannedWithoutListing) {
  std::vector<double> forcings;
  for (int k = 0; k < 10; ++k) forcings.push_back(0.5 * k);
  const std::int64_t members = 100000001;
  const plan::Plan plan = small_plan(members, 64, {{"forcing", forcings, {}}});
  EXPECT_EQ(plan.member_count(), 1000000010);
  EXPECT_EQ(plan.batches_per_case(), 1562501);
  EXPECT_EQ(plan.batch_count(), 15625010);

  const plan::Batch last_full = plan.batch(1562499);  // case 0's last full batch
  EXPECT_EQ(last_full.case_index, 0);
  EXPECT_EQ(last_full.first_member, 99999936);  // 1562499 x 64
  EXPECT_EQ(last_full.count, 64);
  const plan::Batch single = plan.batch(1562500);  // case 0's remainder: member 10^8
  EXPECT_EQ(single.case_index, 0);
  EXPECT_EQ(single.first_member, 100000000);
  EXPECT_EQ(single.count, 1);
  const plan::Batch next = plan.batch(1562501);  // case 1 starts afresh
  EXPECT_EQ(next.case_index, 1);
  EXPECT_EQ(next.first_member, 0);
  EXPECT_EQ(next.count, 64);
  const plan::Batch last = plan.batch(plan.batch_count() - 1);
  EXPECT_EQ(last.index, 15625009);
  EXPECT_EQ(last.case_index, 9);
  EXPECT_EQ(last.first_member, 100000000);
  EXPECT_EQ(last.count, 1);
  EXPECT_THROW(plan.batch(15625010), std::out_of_range);
}

}  // namespace
}  // namespace chaosweep::testing

// plan::owner inverts plan::share: enumerated, every item lies in exactly its owner's share,
// for item counts below, equal to and above the rank count; outside [0, n) it throws.
TEST(Plan, OwnerIsTheRankWhoseShareHoldsTheItem) {
  for (int size : {1, 2, 3, 5, 16}) {
    for (std::int64_t n : {0, 1, 2, 4, 5, 15, 16, 17, 100}) {
      for (int rank = 0; rank < size; ++rank) {
        const chaosweep::plan::Range r = chaosweep::plan::share(n, rank, size);
        for (std::int64_t i = r.first; i < r.last; ++i) {
          EXPECT_EQ(chaosweep::plan::owner(n, i, size), rank) << n << " items, " << size << " ranks";
        }
      }
    }
  }
  EXPECT_THROW(chaosweep::plan::owner(10, 10, 3), std::out_of_range);
  EXPECT_THROW(chaosweep::plan::owner(10, -1, 3), std::out_of_range);
}
