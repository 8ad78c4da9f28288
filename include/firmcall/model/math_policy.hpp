// The Boost.Math error policy of the numerical core: domain, overflow and evaluation errors return
// a value (NaN, +-inf or the last iterate) instead of throwing, so that the core never throws and
// reports the case through its status. Root finders (toms748_solve) raise only domain errors, so
// ignoring overflow as well changes nothing for them; the inverse error functions need it.
#pragma once

#include <boost/math/policies/policy.hpp>

namespace firmcall {

using NoThrowPolicy = boost::math::policies::policy<
    boost::math::policies::domain_error<boost::math::policies::ignore_error>,
    boost::math::policies::overflow_error<boost::math::policies::ignore_error>,
    boost::math::policies::evaluation_error<boost::math::policies::ignore_error>>;

}  // namespace firmcall
