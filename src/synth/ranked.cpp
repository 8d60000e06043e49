// The ranked search under every design: each job (a topology with a device) drafts its
// proposals and chooses the drafts worth a corner pass (Searcher); RankedSearch hands the
// candidates out in rank order, assessing a draft only when the order needs it (NOTES below).
#include <algorithm>
#include <cmath>
#include <cstring>
#include <deque>
#include <functional>
#include <limits>
#include <map>
#include <queue>
#include <span>
#include <thread>
#include <tuple>

#include "detail.hpp"

namespace shelfstage::synth::detail {

/// A job's choice of the drafts that get the full corner pass (~100 evaluations each): up to
/// spec.search_families families of designs, and in each the spec.search_variants best
/// variants in one resistor (their quick estimates are near-ties the full pass settles), taken
/// in the order of the quick estimate. The choice is the one a full sort of every estimate
/// would give, but the estimates are worked out only as far as they can change it:
///  - a queue holds (value, draft), least first: a draft enters at its floor (score_floor),
///    and drafts enter while their floors are at most the queue's least value;
///  - the estimate is the largest gain error over the corner pieces (StageBuilder::
///    quick_from), so the largest over some of them is a floor under it that only rises as
///    pieces are added; a draft at the head with pieces left gets one more and goes back;
///  - a draft at the head with every piece done (or an invalid one met: 1e6 either way) has
///    its whole estimate, and no draft in the queue or not yet in it can come before it
///    (their floors are at least its value; equal values go by draft index, as the sort's);
///  - a draft whose family is full, or that would start one past the limit, never can be
///    chosen (heads come only while fewer than the limit, and families only fill): it
///    leaves the queue unrefined.
/// The choice is made as far as the ranked search needs it (NOTES 5): advance() takes the
/// steps whose value is at most a limit and pauses at the first above it, so what a paused
/// choice has chosen is, in order, what the whole choice chooses first, and every draft it
/// would choose later has a quick estimate of at least frontier().
class Choice {
 public:
  Choice(const StageBuilder& builder, const Spec& spec, std::deque<StageBuilder::Draft> found)
      : builder_(builder),
        roles_(builder.topology().roles()),
        families_(static_cast<std::size_t>(spec.search_families)),
        variants_(spec.search_variants),
        found_(std::move(found)),
        corners_(builder.corner_count()),
        every_(corners_ >= kMaskBits ? ~0ULL : (1ULL << corners_) - 1),
        partial_(found_.size()),
        hits_(corners_, 0) {
    bound_.reserve(found_.size());
    for (std::size_t i = 0; i < found_.size(); ++i) bound_.emplace_back(builder.score_floor(found_[i]), i);
    std::sort(bound_.begin(), bound_.end());
  }

  /// Takes the choice's steps while the value at the head of its queue is at most `limit`;
  /// the drafts chosen meanwhile go to `chosen` and their quick estimates to `quick`, in order.
  void advance(double limit, std::vector<StageBuilder::Draft>& chosen, std::vector<double>& quick, SearchStats& stats) {
    while (!done_ && !all_full()) {
      // Drafts enter (as their floors) until the least entry is known to come first.
      while (next_ < bound_.size() && (scored_.empty() || bound_[next_].first <= scored_.top().first)) {
        const std::size_t i = bound_[next_++].second;
        if (heads_.size() >= families_ && family_of(i) < 0) continue;
        scored_.push(bound_[next_ - 1]);
      }
      if (scored_.empty()) break;
      if (scored_.top().first > limit) return;
      const auto [estimate, i] = scored_.top();
      scored_.pop();
      const long f = family_of(i);
      if (f < 0) continue;
      // (A draft whose nominal screen was put off takes it the first time it comes to the head:
      // NOTES 7.)
      if (found_[i].screen_pending && !builder_.settle_screen(found_[i], stats)) continue;
      if (!finished(partial_[i])) {
        // A floor still: one corner piece more, and back in line.
        refine(i, stats);
        scored_.emplace(builder_.quick_from(found_[i], partial_[i].worst), i);
        continue;
      }
      if (static_cast<std::size_t>(f) == heads_.size()) {
        heads_.push_back(i);
        members_.push_back(0);
      }
      ++members_[static_cast<std::size_t>(f)];
      chosen.push_back(found_[i]);
      quick.push_back(estimate);
    }
    finish();
  }
  bool done() const { return done_; }
  /// The nominal screens still put off, taken (NOTES 7: the counts as drafting whole).
  void settle(SearchStats& stats) {
    for (auto& d : found_)
      if (d.screen_pending) builder_.settle_screen(d, stats);
  }
  /// A floor under the quick estimate of every draft the choice would still choose (infinity
  /// when it is made).
  double frontier() const {
    if (done_) return std::numeric_limits<double>::infinity();
    double f = next_ < bound_.size() ? bound_[next_].first : std::numeric_limits<double>::infinity();
    if (!scored_.empty()) f = std::min(f, scored_.top().first);
    return f;
  }

 private:
  static constexpr std::size_t kMaskBits = 64;
  using Entry = std::pair<double, std::size_t>;
  // A draft's estimate so far: the corner pieces worked out (a mask) and the largest error
  // among them.
  struct Partial {
    std::uint64_t done = 0;
    double worst = 0;
    std::size_t largest = 0;  // the piece it came from
  };

  bool finished(const Partial& p) const { return p.done == every_ || std::isinf(p.worst); }
  bool variant(const StageBuilder::Draft& a, const StageBuilder::Draft& b) const {
    int differ = 0;
    for (std::size_t r = 0; r < roles_.size(); ++r)
      if (roles_[r].kind == 'R' && std::abs(a.values[r] - b.values[r]) > 1e-9 * std::max(a.values[r], b.values[r]))
        ++differ;
    return differ <= 1;
  }
  void refine(std::size_t i, SearchStats& stats) {
    Partial& p = partial_[i];
    if (corners_ > kMaskBits) {  // (no piece lists this long; estimated whole)
      p.worst = 0;
      for (std::size_t k = 0; k < corners_ && !std::isinf(p.worst); ++k)
        p.worst = std::max(p.worst, builder_.corner_error(found_[i], k, stats));
      p.done = every_;
      return;
    }
    // How often each corner piece gave a finished estimate its largest error: the likeliest
    // is worked out first, so that the estimate rises early where it will.
    std::size_t k = corners_;
    for (std::size_t c = 0; c < corners_; ++c)
      if (!(p.done >> c & 1U) && (k == corners_ || hits_[c] > hits_[k])) k = c;
    const double e = builder_.corner_error(found_[i], k, stats);
    p.done |= 1ULL << k;
    if (e > p.worst || p.done == (1ULL << k)) {
      p.worst = e;
      p.largest = k;
    }
    if (finished(p)) ++hits_[p.largest];
  }
  // The family a draft joins (heads.size() for a new one), or -1 when it cannot be chosen
  // (then never: heads only come while fewer than `families`, and a family only fills).
  long family_of(std::size_t i) const {
    std::size_t f = 0;
    while (f < heads_.size() && !variant(found_[heads_[f]], found_[i])) ++f;
    if (f == heads_.size()) return heads_.size() >= families_ ? -1 : static_cast<long>(f);
    return members_[f] >= variants_ ? -1 : static_cast<long>(f);
  }
  bool all_full() const {
    return heads_.size() >= families_ &&
           std::all_of(members_.begin(), members_.end(), [&](int m) { return m >= variants_; });
  }
  // The choice made: what it kept to make it goes (the drafts stay for settle()).
  void finish() {
    done_ = true;
    std::vector<Partial>().swap(partial_);
    std::vector<Entry>().swap(bound_);
    scored_ = {};
  }

  const StageBuilder& builder_;
  std::span<const stages::Role> roles_;
  std::size_t families_;
  int variants_;
  std::deque<StageBuilder::Draft> found_;
  std::size_t corners_;
  std::uint64_t every_;
  std::vector<Partial> partial_;
  std::vector<long> hits_;
  std::vector<Entry> bound_;  // (floor, draft), least first
  std::size_t next_ = 0;      // bound_ before it: entered
  std::priority_queue<Entry, std::vector<Entry>, std::greater<>> scored_;
  std::vector<std::size_t> heads_;
  std::vector<int> members_;
  bool done_ = false;
};

/// One job drafted and its choice made as far as it goes: the builder, the drafts chosen for
/// the corner pass (in the order of the choice) and what the drafting learned.
struct JobWork {
  std::unique_ptr<StageBuilder> builder;
  std::vector<StageBuilder::Draft> chosen;
  std::vector<double> quick;       ///< each chosen draft's quick estimate (StageBuilder::quick_from)
  std::unique_ptr<Choice> choice;  ///< the choice so far (none: nothing to choose)
  SearchStats stats;
};

namespace {

// The shelf's values with fewer choices per question (Spec::search_breadth below 1): the
// design equations then propose fewer sets. Chains use it for their many stage pools.
class ThinnedValues final : public stages::ValueSource {
 public:
  ThinnedValues(const stages::ValueSource& inner, double breadth) : inner_(inner), breadth_(breadth) {}
  void nearest(double target_ohm, std::size_t n, std::vector<double>& out) const override {
    inner_.nearest(target_ohm,
                   std::max<std::size_t>(1, static_cast<std::size_t>(std::lround(static_cast<double>(n) * breadth_))),
                   out);
  }
  void spread(double lo_ohm, double hi_ohm, std::size_t max_n, std::vector<double>& out) const override {
    inner_.spread(
        lo_ohm, hi_ohm,
        std::max<std::size_t>(2, static_cast<std::size_t>(std::lround(static_cast<double>(max_n) * breadth_))), out);
  }

 private:
  const stages::ValueSource& inner_;
  double breadth_;
};

// The proposals a job has seen, by a 64-bit hash of their values: a flat table with linear
// probing (a job proposes up to millions; a node per proposal cost more than the hashing).
class SeenProposals {
 public:
  /// False when the proposal was seen before.
  bool insert(const stages::Values& v, std::size_t n) {
    std::uint64_t h = 0x9E3779B97F4A7C15ULL;
    for (std::size_t i = 0; i < n; ++i) {
      std::uint64_t bits = 0;
      std::memcpy(&bits, &v.v[i], sizeof bits);
      h = (h ^ bits) * 0xFF51AFD7ED558CCDULL;
      h ^= h >> 32;
    }
    h |= 1;  // 0 marks an empty slot
    if (2 * (count_ + 1) > slots_.size()) grow();
    for (std::size_t i = h & (slots_.size() - 1);; i = (i + 1) & (slots_.size() - 1)) {
      if (slots_[i] == h) return false;
      if (slots_[i] == 0) {
        slots_[i] = h;
        ++count_;
        return true;
      }
    }
  }

 private:
  void grow() {
    std::vector<std::uint64_t> old(std::max<std::size_t>(1024, 2 * slots_.size()), 0);
    old.swap(slots_);
    for (const std::uint64_t h : old)
      if (h != 0)
        for (std::size_t i = h & (slots_.size() - 1);; i = (i + 1) & (slots_.size() - 1))
          if (slots_[i] == 0) {
            slots_[i] = h;
            break;
          }
  }
  std::vector<std::uint64_t> slots_;
  std::size_t count_ = 0;
};

class Searcher {
 public:
  Searcher(const Spec& spec, const Shelf& shelf, bool probe) : spec_(spec), shelf_(shelf), probe_(probe) {}

  /// A job's drafting and choice: the builder, and the chosen drafts in the order of the
  /// choice (none for a probe, which only learns how close the stages come: work.stats).
  void prepare(const detail::Job& job, detail::JobWork& work) const {
    work.builder = std::make_unique<StageBuilder>(spec_, shelf_, *job.topology, *job.device, job.piece,
                                                  job.device_available, probe_, job.device2, job.device2_available);
    const StageBuilder& builder = *work.builder;
    SearchStats& stats = work.stats;
    // A device the supply takes past its rating fails every stage's corner pass (the rating
    // check there is detail::check_ratings): nothing is drafted (SearchStats::past_rating).
    for (const devices::DeviceRecord* d : {job.device, job.device2})
      if (d)
        if (std::string why = detail::supply_rating(spec_, *d); !why.empty()) {
          ++stats.past_rating;
          stats.past_rating_example = std::move(why);
          return;
        }
    stages::Goal goal = builder.goal();
    // A buffer gains less than one from its source (is_buffer): short of a window whose low end
    // is past that with the models' tenth of slack (as stages' short_of_gain), it proposes
    // nothing (and is not counted as proposing). A probe keeps it.
    if (job.topology->is_buffer() && !probe_ && 1.0 < 0.9 * goal.gain_lo) return;
    const auto roles = job.topology->roles();
    std::deque<StageBuilder::Draft> found;  // (a deque: tens of thousands, never moved)
    SeenProposals seen;
    const ThinnedValues thinned(shelf_, spec_.search_breadth);
    const stages::ValueSource& values =
        spec_.search_breadth < 1.0 ? static_cast<const stages::ValueSource&>(thinned) : shelf_;
    // What the design steps leave out by a bound counts as proposed and stopped there
    // (stages::LeftOut).
    stages::LeftOut left_out;
    goal.left_out = &left_out;
    job.topology->propose(goal, builder.nominal_device(), builder.conditions(), values,
                          [&](const stages::Values& proposal) {
                            ++stats.proposals;
                            if (!seen.insert(proposal, roles.size())) return;
                            StageBuilder::Draft d;
                            // (A probe keeps no choice to take a put-off screen: it drafts whole.)
                            if (builder.draft(proposal, d, stats, !probe_)) found.push_back(std::move(d));
                          });
    for (const auto& [why, n] :
         {std::pair{"swing", left_out.swing}, std::pair{"gain", left_out.gain}, std::pair{"zin", left_out.zin}})
      if (n > 0) {
        stats.proposals += n;
        stats.failures[why] += n;
      }
    // (A stage left out short of the gain reaches less than the bound it was left out by: the
    // least gain the stages reach is at most that.)
    if (left_out.gain > 0) stats.least_gain = std::min(stats.least_gain, left_out.least_gain);
    if (probe_) return;
    work.choice = std::make_unique<Choice>(builder, spec_, std::move(found));
  }

 private:
  const Spec& spec_;
  const Shelf& shelf_;
  bool probe_;
};

}  // namespace

// NOTES (the ranked search):
//  1. Every job is drafted first (Searcher::prepare, on every core), then makes its choice of
//     drafts for the corner pass (Choice) as far as NOTES 5 needs it.
//  2. Each chosen draft has a floor under the score its corner pass would give
//     (StageBuilder::score_floor: the nominal gain error counted as the worst; the worst
//     gain range holds the nominal gain, and a stage's gain keeps its sign wherever it is
//     valid, so the worst error is never below the nominal's; the score's other terms are
//     counted alike or are never negative).
//     When the request has one supply and one temperature, the draft's quick estimate
//     (StageBuilder::quick_from over every corner piece) is a floor too, less a slack of a
//     millionth of gain error for rounding: it takes the gain at the device's corner pieces
//     with the parts nominal at that supply and temperature, a point the corner pass
//     evaluates as well (with the distortion, the band's losses or the parts' stress worked
//     out, which leave the gain as it is: tests/synth/evaluate_test.cpp holds the band's to
//     that), and the corner pass's worst error is the largest over its points. An estimate
//     that met an invalid corner says nothing (that corner fails the pass too, but the
//     draft's floor is left as it is).
//     The quick estimate leaves the parts' tolerances out, and they are most of an op-amp
//     stage's worst case (its gain is its resistors' ratio) and much of a degenerated
//     transistor stage's, so such floors sat well under the scores and the search assessed
//     many drafts it never listed (a feedback pair's corner pass works out its distortion by
//     a dozen solves at each of its points). On one supply and temperature a floor also takes
//     the gain error of the corner pass's gain pushes at the nominal piece (detail::
//     tolerance_gain_error: points that pass evaluates as well), worked out when the draft is
//     about to be assessed (NOTES 6).
//  3. The candidates are handed out in rank order: score, then pieces, then job, then the
//     job's order of choice, the order a stable sort of every assessed candidate by score and
//     pieces gives. One is handed out only when its score is below the floor of every draft
//     not yet assessed, chosen or still to be chosen (NOTES 5); until then the drafts of least
//     floor are assessed, a batch at a time on every core. A draft whose floor lies above the
//     last score handed out is never assessed: it could not have ranked before it.
//  4. The counts (SearchStats) are merged job by job, then each assessed draft's in the order
//     of jobs and choice, as a search assessing every draft in that order would merge them;
//     when every draft is assessed (nothing listed), they are the same counts.
//  5. A choice is made only as far as the hand-out needs it. With the quick estimates floors
//     (NOTES 2), a draft a paused choice would still choose has a floor of at least the
//     choice's frontier less the slack (Choice::frontier), so the frontier stands in for all
//     of them; when it is the least floor of an order, the choices of that order's jobs go on
//     (on every core) up to a limit a quarter above it, and what they choose joins the order.
//     Paused where it was, a choice chooses what the whole choice chooses first, in the same
//     order, so the hand-out is the one every choice made whole gives; the drafts a whole
//     choice would refine only to choose them past the last score handed out are never
//     refined (most of a search's quick estimates were). Without quick floors (a supply
//     range, a temperature range) every choice is made whole at once.
//  6. A draft's tolerance floor (NOTES 2: a dozen evaluations without the distortion) is taken
//     when the draft comes up for assessment, where it costs far less than the corner pass it
//     may spare: an op-amp draft's (its tolerances are most of its score), and any draft's
//     when the corner passes work out the distortion (scores of evaluations each, a feedback
//     pair's a dozen solves apiece); a floor only rises. Each order keeps its drafts by a key, the floor a draft
//     had when it joined or was last put in place, so a key is never above its draft's floor
//     and stands in for it in the hand-out (NOTES 3); a draft whose floor rose past its key
//     goes back to its place before anything is decided at the frontier. The drafts whose
//     floors rise above the last score handed out are never assessed.
//  7. When the request has a band or bounds the distortion, the rest of a draft's nominal
//     screen (the band's losses with the fitted capacitors, the distortion: an evaluation, for
//     a feedback pair a dozen solves of its bias besides) is put off: a draft that holds on
//     its first screen, its gain in the window for the fitted input capacitor, is kept with
//     the screen pending (StageBuilder::draft's defer_screen) and takes it only when it first
//     comes to the head of its choice's queue (Choice::advance), where one that fails it is
//     passed over. A draft that fails cannot be chosen, and a choice looks at no draft but
//     the head of its queue, so it chooses what it would have chosen with the screen taken
//     first. The stops the put-off screens would count are counted when they are taken;
//     settle() takes the rest, for a diagnosis that reads every stop (run_jobs, and design()
//     when nothing is listed).
struct RankedSearch::Impl {
  const Spec& spec;
  const std::vector<Job>& jobs;
  std::vector<JobWork> work;  // by job
  struct Item {
    std::uint32_t job = 0, pos = 0;
    double floor = 0;
    enum class State : std::uint8_t { pending, held, failed } state = State::pending;
    long floor_evaluations = 0;  // NOTES 2: the tolerance floor's
    bool floor_final = false;    // NOTES 6: the tolerance floor taken (or none to take)
    Candidate c;
    long evaluations = 0;
    std::string failure;
  };
  // (A deque: ids and references stay as choices go on and items join.)
  std::deque<Item> items;
  bool quick_floors = false;  // NOTES 2: the quick estimates are floors too
  bool distortion = false;    // NOTES 6: the corner passes work out the distortion
  double limit = 0;           // NOTES 5: the choices are made up to it

  // A gain error of a millionth, in score points (NOTES 2).
  static constexpr double kQuickSlack = 100.0 * 1e-6;

  double floor_of(const JobWork& w, std::size_t k) const {
    double f = w.builder->score_floor(w.chosen[k]);
    if (quick_floors && w.quick[k] < 1e6) f = std::max(f, w.quick[k] - kQuickSlack);
    return f;
  }
  // One order of hand-out: over every job, or over the jobs of one first device.
  struct View {
    std::function<bool(std::uint32_t)> keep;  // its items (asked once of each, as it joins)
    std::function<bool(std::uint32_t)> job;   // its jobs
    std::size_t seen = 0;                     // items asked of keep
    // Its items by a key: their floors as they were when they joined or were last put in place
    // (a floor only rises, NOTES 6), least first.
    struct Entry {
      double key;
      std::uint32_t id;
    };
    std::vector<Entry> by_floor;
    std::vector<bool> dropped;        // by item: passed over (never handed out)
    std::size_t frontier = 0;         // by_floor before it: assessed
    std::vector<std::uint32_t> heap;  // assessed and holding, not yet handed out
    std::vector<std::uint32_t> out;   // handed out, in rank order
  };
  View every;
  std::map<std::string, View> views;  // the orders over some drafts, by name, made on first use
  std::size_t assessed = 0;

  Impl(const Spec& s, const std::vector<Job>& j) : spec(s), jobs(j) {}

  // A view's entries by (key, job, order of choice).
  bool key_before(const View::Entry& a, const View::Entry& b) const {
    const Item &x = items[a.id], &y = items[b.id];
    return std::tie(a.key, x.job, x.pos) < std::tie(b.key, y.job, y.pos);
  }
  bool ranks_before(std::uint32_t a, std::uint32_t b) const {
    const Item &x = items[a], &y = items[b];
    if (x.c.score != y.c.score) return x.c.score < y.c.score;
    if (x.c.pieces != y.c.pieces) return x.c.pieces < y.c.pieces;
    return std::tie(x.job, x.pos) < std::tie(y.job, y.pos);
  }

  // The items that joined since the view last looked, in place by floor among those it has
  // not assessed.
  void sync(View& v) {
    const std::size_t old = v.by_floor.size();
    for (; v.seen < items.size(); ++v.seen) {
      const auto id = static_cast<std::uint32_t>(v.seen);
      if (v.keep(id)) v.by_floor.push_back({items[id].floor, id});
    }
    v.dropped.resize(items.size(), false);
    if (v.by_floor.size() == old) return;
    const auto mid = v.by_floor.begin() + static_cast<long>(old);
    auto less = [&](const View::Entry& a, const View::Entry& b) { return key_before(a, b); };
    std::sort(mid, v.by_floor.end(), less);
    std::inplace_merge(v.by_floor.begin() + static_cast<long>(v.frontier), mid, v.by_floor.end(), less);
  }
  // NOTES 6: the entry at the frontier, its floor risen past its key, goes to its place.
  void put_in_place(View& v) {
    const auto first = v.by_floor.begin() + static_cast<long>(v.frontier);
    View::Entry e = *first;
    e.key = items[e.id].floor;
    auto less = [&](const View::Entry& a, const View::Entry& b) { return key_before(a, b); };
    const auto to = std::upper_bound(first + 1, v.by_floor.end(), e, less);
    std::rotate(first, first + 1, to);
    *(to - 1) = e;
  }
  // The order named `name` (made on first use), its membership tests given again on every use
  // (the caller's functions live as long as its call).
  View& view(const std::string& name, std::function<bool(std::uint32_t)> keep, std::function<bool(std::uint32_t)> job) {
    View& v = views[name];
    v.keep = std::move(keep);
    v.job = std::move(job);
    return v;
  }

  // A pending draft as the candidate it makes (before its corner pass).
  const Candidate& shell(Item& it) {
    if (!it.c.topology) it.c = work[it.job].builder->candidate(work[it.job].chosen[it.pos]);
    return it.c;
  }

  // Whether the view passes over a pending draft (NOTES 3).
  bool pass_over(View& v, std::uint32_t i, const PassOver* skip) {
    if (!v.dropped[i] && skip && *skip && (*skip)(shell(items[i]))) v.dropped[i] = true;
    return v.dropped[i];
  }

  void assess(const std::vector<std::uint32_t>& batch) {
    parallel_for(batch.size(), [&](std::size_t b) {
      Item& it = items[batch[b]];
      const JobWork& w = work[it.job];
      SearchStats s;
      if (!it.c.topology) it.c = w.builder->candidate(w.chosen[it.pos]);
      const bool held = w.builder->assess(it.c, s);
      it.evaluations = s.evaluations;
      if (!held && !s.corner_examples.empty()) it.failure = s.corner_examples.begin()->second;
      it.state = held ? Item::State::held : Item::State::failed;
      if (!held) it.c = Candidate{};
    });
    assessed += batch.size();
  }

  // NOTES 5: a floor under every draft the view's jobs would still choose (infinity when
  // their choices are made).
  double unchosen_floor(const View& v) const {
    double f = std::numeric_limits<double>::infinity();
    for (std::uint32_t j = 0; j < work.size(); ++j)
      if (work[j].choice && !work[j].choice->done() && v.job(j)) f = std::min(f, work[j].choice->frontier());
    return f - kQuickSlack;
  }

  // The choices of the jobs `job` takes, on every core, up to `to`; what they choose joins
  // the items, with their floors (NOTES 2; the tolerance floor comes later, NOTES 6).
  void choose_up_to(double to, const std::function<bool(std::uint32_t)>& job) {
    limit = std::max(limit, to);
    std::vector<std::uint32_t> go;
    for (std::uint32_t j = 0; j < work.size(); ++j)
      if (work[j].choice && !work[j].choice->done() && job(j) && work[j].choice->frontier() <= limit) go.push_back(j);
    std::vector<std::size_t> before(work.size());
    for (std::uint32_t j = 0; j < work.size(); ++j) before[j] = work[j].chosen.size();
    parallel_for(go.size(), [&](std::size_t g) {
      JobWork& w = work[go[g]];
      w.choice->advance(limit, w.chosen, w.quick, w.stats);
    });
    for (const std::uint32_t j : go)
      for (std::size_t k = before[j]; k < work[j].chosen.size(); ++k) {
        Item it;
        it.job = j;
        it.pos = static_cast<std::uint32_t>(k);
        it.floor = floor_of(work[j], k);
        it.floor_final = !quick_floors || !(distortion || jobs[j].device->kind == devices::DeviceKind::opamp);
        items.push_back(std::move(it));
      }
  }

  // NOTES 6: the tolerance floors of pending drafts (on every core).
  void take_tolerance_floors(const std::vector<std::uint32_t>& ids) {
    parallel_for(ids.size(), [&](std::size_t b) {
      Item& it = items[ids[b]];
      const JobWork& w = work[it.job];
      if (!it.c.topology) it.c = w.builder->candidate(w.chosen[it.pos]);
      const double tol = detail::tolerance_gain_error(it.c, spec, it.floor_evaluations);
      // (The quick estimate's count with this error as the worst: a floor as score_floor is.)
      it.floor = std::max(it.floor, w.builder->quick_from(w.chosen[it.pos], tol) - kQuickSlack);
      it.floor_final = true;
    });
  }

  // Hands out the view's next candidate (NOTES 3); false when none is left.
  bool step(View& v, const PassOver* skip) {
    auto later = [&](std::uint32_t a, std::uint32_t b) { return ranks_before(b, a); };
    for (;;) {
      sync(v);
      // Drafts assessed already (by this view or another), or passed over, leave the frontier;
      // a draft whose floor rose past its key goes to its place (NOTES 6).
      while (v.frontier < v.by_floor.size()) {
        const std::uint32_t f = v.by_floor[v.frontier].id;
        if (items[f].state == Item::State::pending && items[f].floor > v.by_floor[v.frontier].key) {
          put_in_place(v);
          continue;
        }
        if (items[f].state == Item::State::pending && !pass_over(v, f, skip)) break;
        const std::uint32_t i = v.by_floor[v.frontier++].id;
        if (items[i].state == Item::State::pending) continue;
        if (items[i].state == Item::State::held) {
          v.heap.push_back(i);
          std::push_heap(v.heap.begin(), v.heap.end(), later);
        }
      }
      const bool more = v.frontier < v.by_floor.size();
      const double unchosen = unchosen_floor(v);
      const double least = std::min(more ? v.by_floor[v.frontier].key : unchosen, unchosen);
      if (!v.heap.empty() && items[v.heap.front()].c.score < least) {
        std::pop_heap(v.heap.begin(), v.heap.end(), later);
        v.out.push_back(v.heap.back());
        v.heap.pop_back();
        return true;
      }
      if (!more && std::isinf(unchosen)) return false;
      if (!more || unchosen < v.by_floor[v.frontier].key) {
        // NOTES 5: the choices go on, a quarter past the least floor they stand for.
        const double from = unchosen + kQuickSlack;
        choose_up_to(from + 0.25 * std::abs(from) + 1.0, v.job);
        continue;
      }
      // The next drafts by floor; a batch for every core (one when the cores are busy).
      const std::size_t want = in_parallel_for ? 1 : 2 * std::max(1u, std::thread::hardware_concurrency());
      std::vector<std::uint32_t> batch, unfloored;
      for (std::size_t k = v.frontier; k < v.by_floor.size() && batch.size() < want; ++k) {
        const std::uint32_t i = v.by_floor[k].id;
        if (items[i].state != Item::State::pending || pass_over(v, i, skip)) continue;
        batch.push_back(i);
        if (!items[i].floor_final) unfloored.push_back(i);
      }
      // NOTES 6: a batch's tolerance floors first; those that rise take their places, and the
      // order is looked at again before anything is assessed.
      if (!unfloored.empty()) {
        take_tolerance_floors(unfloored);
        continue;
      }
      assess(batch);
    }
  }

  // The view's k-th candidate (NOTES 3), stepping it as far as that takes.
  std::optional<std::size_t> nth(View& v, std::size_t k, const PassOver* skip) {
    while (v.out.size() <= k)
      if (!step(v, skip)) return std::nullopt;
    return v.out[k];
  }
};

RankedSearch::RankedSearch(const Spec& spec, const Shelf& shelf, const std::vector<Job>& jobs, bool probe)
    : impl_(std::make_unique<Impl>(spec, jobs)) {
  const Searcher searcher(spec, shelf, probe);
  impl_->work.resize(jobs.size());
  impl_->quick_floors = spec.supply_lo_v == spec.supply_hi_v && !spec.temp_c;
  impl_->distortion = spec.swing_vpp || spec.prefer == Spec::Prefer::distortion;
  parallel_for(jobs.size(), [&](std::size_t i) { searcher.prepare(jobs[i], impl_->work[i]); });
  impl_->every.keep = [](std::uint32_t) { return true; };
  impl_->every.job = [](std::uint32_t) { return true; };
  if (!impl_->quick_floors) choose_all();
}

RankedSearch::~RankedSearch() = default;

void RankedSearch::settle(SearchStats& out) {
  std::vector<SearchStats> by_job(impl_->work.size());
  parallel_for(impl_->work.size(), [&](std::size_t j) {
    JobWork& w = impl_->work[j];
    if (w.choice) w.choice->settle(by_job[j]);
  });
  for (const SearchStats& s : by_job) out.merge(s);
}

void RankedSearch::choose_all() {
  impl_->choose_up_to(std::numeric_limits<double>::infinity(), [](std::uint32_t) { return true; });
}

std::optional<std::size_t> RankedSearch::at(std::size_t k, const std::string* device, const PassOver& skip) {
  Impl& m = *impl_;
  if (!device) return m.nth(m.every, k, &skip);
  auto of_device = [&m, name = *device](std::uint32_t j) { return m.work[j].builder->device().name == name; };
  return m.nth(
      m.view(
          "device " + *device, [&m, of_device](std::uint32_t i) { return of_device(m.items[i].job); }, of_device),
      k, &skip);
}

std::optional<std::size_t> RankedSearch::at_among(std::size_t k, const std::string& name,
                                                  const std::function<bool(std::size_t)>& member) {
  Impl& m = *impl_;
  return m.nth(
      m.view(
          "among " + name, [&member](std::uint32_t i) { return member(i); }, [](std::uint32_t) { return true; }),
      k, nullptr);
}

const Candidate& RankedSearch::shell(std::size_t id) { return impl_->shell(impl_->items[id]); }

Candidate& RankedSearch::candidate(std::size_t id) { return impl_->items[id].c; }

bool RankedSearch::before(std::size_t a, std::size_t b) const {
  return impl_->ranks_before(static_cast<std::uint32_t>(a), static_cast<std::uint32_t>(b));
}

std::vector<Candidate> RankedSearch::all() {
  std::vector<Candidate> out;
  for (std::size_t k = 0;; ++k) {
    const auto id = at(k);
    if (!id) break;
    out.push_back(std::move(candidate(*id)));
  }
  return out;
}

void RankedSearch::tally(SearchStats& out) const {
  for (const JobWork& w : impl_->work) out.merge(w.stats);
  std::vector<const Impl::Item*> by_choice;
  for (const Impl::Item& it : impl_->items) by_choice.push_back(&it);
  std::sort(by_choice.begin(), by_choice.end(), [](const Impl::Item* a, const Impl::Item* b) {
    return std::tie(a->job, a->pos) < std::tie(b->job, b->pos);
  });
  for (const Impl::Item* it : by_choice) {
    out.evaluations += it->evaluations + it->floor_evaluations;
    if (it->state == Impl::Item::State::failed) out.note_corner_failure(it->failure);
  }
}

std::size_t RankedSearch::chosen() const { return impl_->items.size(); }
std::size_t RankedSearch::assessed() const { return impl_->assessed; }

// Runs every job on the machine's cores; the calling thread reports progress.
std::vector<Candidate> run_jobs(const Spec& spec, const Shelf& shelf, const std::vector<Job>& jobs, SearchStats& tally,
                                const Progress& progress, bool probe) {
  RankedSearch search(spec, shelf, jobs, probe);
  if (progress) progress(static_cast<double>(jobs.size()), static_cast<double>(jobs.size()), "stages searched");
  std::vector<Candidate> all = search.all();
  search.tally(tally);
  search.settle(tally);
  return all;
}

}  // namespace shelfstage::synth::detail
