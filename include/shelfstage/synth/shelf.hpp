// What the shelf can make: every value reachable from the stock with single parts and
// series or parallel pairs (triples on request), with recipes, bounds, ratings and the
// pieces each consumes. Sorted for nearest-value search.
//
// NOTES
//  1. A combination must buy accuracy: the piece that moves its value least (in series the
//     smallest, in parallel the largest) must move it by more than the tolerance of the piece
//     that sets it (the larger side of an asymmetric one). 6k81+270k of 5 % parts moves 270k by
//     2.5 %, inside its own 5 %: it is not offered; 4k75||220k of 1 % parts moves 4k75 by 2.1 %:
//     it is. (Where no single part reaches a value, any pair that does moves its main piece by
//     more than a tolerance.)
//  2. Electrolytics are never put in series; capacitors of other kinds are.
//  3. Memory stays linear in the stock: resistor pairs are never tabled. nearest() and
//     spread() find them on the fly (for each single a in reach, the partners b nearest the
//     b that would make a+b or a||b hit the target: one search, started from the last
//     single's, since that b falls as a grows; on a dense stock at most 64 singles of each
//     range, spread over it; each side of b taken outward only while the pair is nearer than
//     the n nearest distinct values found so far), and resistor() works
//     out a value's recipe once and remembers it. The answers of nearest() and spread() are
//     kept by question, shared by the search's threads, up to a fixed number (262,144) that
//     does not grow with the stock. Each distinct value makes its pairs with
//     the best line group of that value (stocked before purchasable, then the tightest).
//     Capacitors (a few dozen values) and triples (--combine 3, among the 120 best-stocked
//     values) are tabled.
#pragma once
#include <array>
#include <optional>
#include <memory>
#include <shared_mutex>
#include <unordered_map>
#include <cstdint>
#include <span>
#include <string>
#include <vector>

#include "shelfstage/stages/topology.hpp"
#include "shelfstage/store/part.hpp"

namespace shelfstage::synth {

/// One kind of part on the shelf: the same value, tolerance, rating and dielectric,
/// summed over bins (on hand minus reserved).
struct StockGroup {
  store::PartKind kind = store::PartKind::resistor;
  double value = 0;      ///< ohms or farads
  units::Tolerance tol;  ///< the stated one, or the kind's default
  double rating = 0;     ///< watts (R) or volts (C); 0 when the stock does not say
  std::string dielectric;
  bool polarised = false;
  int available = 0;
  std::vector<std::int64_t> lines;  ///< stock line ids holding it, in bin order
  std::vector<int> line_available;  ///< pieces available on each line
  bool purchase = false;            ///< not on the shelf: a value one could buy
  /// More pieces can be bought (a shelf with purchases: every stocked line may be topped up);
  /// the search then counts a shortfall as pieces to buy instead of refusing the design.
  bool buyable = false;
};

enum class Join { single, series, parallel };

/// One achievable value and its recipe.
struct Combo {
  double nominal = 0, lo = 0, hi = 0;  ///< worst-case bounds from the parts' bounds
  double rating = 0;                   ///< watts the combination may dissipate (R) or volts it may hold (C); 0 unknown
  Join join = Join::single;
  std::uint8_t count = 1;                ///< pieces
  std::array<std::uint32_t, 3> group{};  ///< StockGroup indices
  bool polarised = false;
  bool purchase = false;  ///< needs a part not on the shelf
};

/// Default tolerances when the stock does not state one (documented in README):
/// resistors 5 %, electrolytic and tantalum -20/+20 %, other capacitors 10 %.
units::Tolerance default_tolerance(const store::Part& p);

/// A value as bench notes write it: the IEC 60062 code with a lower-case k and no trailing
/// R on whole ohms ("2k2", "10k", "150", "4R7", "100n", "2u2").
std::string compact_value(double value, bool resistor);

class Shelf final : public stages::ValueSource {
 public:
  struct Options {
    int combine = 2;             ///< 1, 2 or 3 parts per value
    bool add_purchases = false;  ///< add E24 resistors and E6 capacitors one could buy
    double purchase_volts = 50;  ///< rating of the capacitors one could buy
  };
  Shelf(const std::vector<store::Part>& parts, Options options);
  ~Shelf() override;

  const std::vector<StockGroup>& groups() const { return groups_; }
  /// Every resistance the shelf can make, with recipes, sorted by nominal, then fewest
  /// pieces, then tightest: built on each call (a table quadratic in the stock; for tests
  /// and enumerations on small shelves, not for the search).
  std::vector<Combo> resistors() const;
  std::span<const Combo> capacitors() const { return c_; }

  /// True when the shelf offers purchases (Options::add_purchases).
  bool market() const { return market_; }

  // ValueSource (resistances). On a shelf with purchases, nearest() offers the n nearest
  // values the stock alone makes as well as the n nearest overall, so a design that buys
  // nothing is always proposed beside the closer ones that would. Each value is offered
  // once, where it first came.
  void nearest(double target_ohm, std::size_t n, std::vector<double>& out) const override;
  void spread(double lo_ohm, double hi_ohm, std::size_t max_n, std::vector<double>& out) const override;

  /// The recipe for a resistance the shelf can make (exact nominal from nearest/spread):
  /// fewest pieces, then tightest bounds. nullptr if none.
  const Combo* resistor(double nominal_ohm) const;
  /// The smallest capacitance whose lower bound reaches min_f and whose rating holds
  /// dc_v (with a 25 % margin); polarised parts only when allow_polarised. nullptr if none.
  /// On a shelf with purchases, a stocked one (of any larger value) comes before one to buy.
  const Combo* capacitor_at_least(double min_f, double dc_v, bool allow_polarised) const;

  /// "10k", "10k+150", "2k2||6k8" (IEC 60062 style values joined).
  std::string recipe(const Combo& c) const;

 private:
  /// Combinations of min_count..max_count pieces of the kind, sorted for lookup.
  void build(std::vector<Combo>& out, store::PartKind kind, int min_count, int max_count) const;
  Combo make_combo(store::PartKind kind, Join join, std::initializer_list<std::uint32_t> gs) const;
  /// The rules a pair must pass (NOTES 1: it buys accuracy; within a factor of 100; enough
  /// pieces when both are of one group).
  bool pair_ok(store::PartKind kind, Join join, std::uint32_t a, std::uint32_t b) const;
  struct ValueIndex {
    std::vector<double> value;         ///< distinct single values, sorted
    std::vector<std::uint32_t> group;  ///< the best group of each
  };
  /// Calls f(nominal, group a, group b, join) for the pairs near target from idx: for every single in reach, the
  /// n partners either side of the ideal one, in series and in parallel, each side outward from the ideal
  /// (the pair moves away from target at every step) until a pair lies as far as bound() (a ratio >= 1: the
  /// caller has enough pairs that near) or the n are done.
  template <class F, class B>
  void pairs_near(const ValueIndex& idx, double target, std::size_t n, F&& f, B&& bound) const;
  /// The n nearest distinct values made from idx (and the triples table) to target.
  void nearest_from(const ValueIndex& idx, const std::vector<double>& triples, double target, std::size_t n,
                    std::vector<double>& out) const;
  /// Keeps a pair's recipe for resistor() unless the value has one already.
  void remember(double nominal, const Combo& c) const;
  /// The recipe of a pair or triple value, worked out (nullopt when none makes it).
  std::optional<Combo> find_recipe(double nominal) const;
  std::vector<StockGroup> groups_;
  int combine_ = 2;
  std::uint64_t serial_ = 0;        // a number no other shelf of this process has (resistor()'s memo)
  std::vector<Combo> r1_, r3_, c_;  // single and triple resistors, capacitors: sorted by nominal, then pieces
  ValueIndex r_index_;              // every single resistor value
  ValueIndex r_stock_index_;        // market only: the values the stock holds
  std::vector<double> r3_values_, r3_stock_values_;  // distinct triple nominals (all; without purchases)
  std::vector<double> r_singles_;                    // distinct single-part stocked resistor values, sorted
  bool market_ = false;
  // resistor() past the single parts: the recipe remembered for the value (key: its bits).
  const Combo* recipe_for(std::uint64_t key, double nominal) const;
  // Recipes of pair and triple values worked out so far (resistor()).
  mutable std::shared_mutex recipes_mutex_;
  mutable std::unordered_map<std::uint64_t, std::optional<Combo>> recipes_;
  // nearest() and spread() answers worked out so far, shared by every thread of a search
  // (shelf.cpp: Answers).
  struct Answers;
  std::unique_ptr<Answers> answers_;
};

}  // namespace shelfstage::synth
